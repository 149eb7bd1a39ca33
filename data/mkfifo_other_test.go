//go:build !unix

package data

import "errors"

// mkfifo fails where the system has no named pipes in the file system.
func mkfifo(path string) error { return errors.New("no named pipes here") }
