package main

import (
	"context"
	"errors"
)

func runReport(ctx context.Context, env *Env, args []string) error {
	return errors.New("report: not built yet")
}
