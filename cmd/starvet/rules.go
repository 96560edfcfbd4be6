package main

import (
	"context"
	"errors"
)

func runRules(ctx context.Context, env *Env, args []string) error {
	return errors.New("rules: not built yet")
}
