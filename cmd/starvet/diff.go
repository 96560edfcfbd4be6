package main

import (
	"context"
	"errors"
)

func runDiff(ctx context.Context, env *Env, args []string) error {
	return errors.New("diff: not built yet")
}
