//go:build !linux

package main

import (
	"errors"
	"os"
	"os/exec"
)

// startInTerminal is implemented only on Linux; elsewhere the tests that
// drive an interactive shell skip.
func startInTerminal(cmd *exec.Cmd) (*os.File, error) {
	return nil, errors.ErrUnsupported
}
