package main

import (
	"context"
	"errors"
)

func runDemo(ctx context.Context, env *Env, args []string) error {
	return errors.New("demo: not built yet")
}
