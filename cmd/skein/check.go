package main

import (
	"context"
	"errors"
)

func cmdCheck(ctx context.Context, cio commandIO, args []string) error {
	return errors.New("not implemented yet")
}
