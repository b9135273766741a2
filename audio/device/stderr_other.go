//go:build !linux

package device

import (
	"errors"
	"os"
)

// captureStderr runs fn; only Linux redirects fd 2 (see stderr_linux.go).
func captureStderr(fn func()) []string {
	fn()
	return nil
}

// RedirectStderr is not available off Linux: standard error stays where
// it is.
func RedirectStderr(f *os.File) (restore func(), err error) {
	return nil, errors.New("device: redirecting standard error is only done on Linux")
}
