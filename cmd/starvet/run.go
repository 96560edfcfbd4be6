package main

import (
	"context"
	"errors"
)

func runRun(ctx context.Context, env *Env, args []string) error {
	return errors.New("run: not built yet")
}
