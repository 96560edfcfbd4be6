package main

import (
	"context"
	"errors"
)

func runMatch(ctx context.Context, env *Env, args []string) error {
	return errors.New("match: not built yet")
}
