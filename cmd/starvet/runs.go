package main

import (
	"context"
	"errors"
)

func runRuns(ctx context.Context, env *Env, args []string) error {
	return errors.New("runs: not built yet")
}
