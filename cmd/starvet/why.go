package main

import (
	"context"
	"errors"
)

func runWhy(ctx context.Context, env *Env, args []string) error {
	return errors.New("why: not built yet")
}
