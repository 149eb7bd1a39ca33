// Package atomicfile writes files so that a reader never sees half of one:
// the content goes to a temporary file beside the target, which is synced
// and renamed over it.
package atomicfile

import (
	"bytes"
	"io"
	"os"
	"path/filepath"
)

// WriteFile writes content to path atomically, creating path's folder when
// needed: into a temporary file in the same folder, synced to disk, made
// readable by all (mode 0644) and renamed to path. On failure the
// temporary file is removed and path is untouched.
func WriteFile(path string, content []byte) error {
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		return err
	}
	tmp, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".tmp-*")
	if err != nil {
		return err
	}
	_, err = tmp.Write(content)
	if err == nil {
		err = tmp.Sync()
	}
	if closeErr := tmp.Close(); err == nil {
		err = closeErr
	}
	if err == nil {
		err = os.Chmod(tmp.Name(), 0o644)
	}
	if err == nil {
		err = os.Rename(tmp.Name(), path)
	}
	if err != nil {
		os.Remove(tmp.Name())
	}
	return err
}

// WriteWith writes to path atomically what write writes, buffered in
// memory; nothing is written when write fails.
func WriteWith(path string, write func(io.Writer) error) error {
	var buf bytes.Buffer
	if err := write(&buf); err != nil {
		return err
	}
	return WriteFile(path, buf.Bytes())
}
