package main

import (
	"context"
	"errors"
)

func runList(ctx context.Context, env *Env, args []string) error {
	return errors.New("list: not built yet")
}
