package experiment

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
)

// lockName is the lock file of a work folder. It is removed when the run
// commits, so a finished run folder holds none.
const lockName = ".lock"

// errBusy is returned by tryLock when another process holds the lock.
var errBusy = errors.New("locked by another process")

// folderLock is a held lock on a work folder: an open lock file with an
// advisory lock (flock(2) where the system has it), released by release
// or, if the process dies (kill -9), by the system, so a stale lock never
// blocks a later run.
type folderLock struct {
	f *os.File
}

// lockWorkFolder takes the lock of the work folder dir, shared (the units
// of a plan, which run side by side) or exclusive (a run, a plan, a
// merge). When another process holds it in a conflicting way, the error
// says which process and what to do.
func lockWorkFolder(dir string, shared bool) (*folderLock, error) {
	path := filepath.Join(dir, lockName)
	f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE, 0o644)
	if err != nil {
		return nil, fmt.Errorf("locking the work folder: %w", err)
	}
	if err := tryLock(f, shared); err != nil {
		f.Close()
		if errors.Is(err, errBusy) {
			who := "another skein process"
			if raw, rerr := os.ReadFile(path); rerr == nil {
				if pid, perr := strconv.Atoi(strings.TrimSpace(string(raw))); perr == nil {
					who = fmt.Sprintf("another skein process (pid %d)", pid)
				}
			}
			return nil, fmt.Errorf("%s is in use by %s: wait for it to finish, or stop it first (a process that was killed holds no lock)", dir, who)
		}
		return nil, fmt.Errorf("locking the work folder %s: %w", dir, err)
	}
	// The holder may have committed (renamed) or removed the folder
	// between our open and our lock: then the lock is on a file that is
	// no longer the folder's.
	if info, err := f.Stat(); err != nil || !sameFile(path, info) {
		unlock(f)
		f.Close()
		return nil, fmt.Errorf("%s was committed or removed by another skein process while this one started", dir)
	}
	if !shared {
		if err := f.Truncate(0); err == nil {
			f.WriteAt([]byte(strconv.Itoa(os.Getpid())+"\n"), 0)
		}
	}
	return &folderLock{f: f}, nil
}

// sameFile reports whether path names the file info describes.
func sameFile(path string, info os.FileInfo) bool {
	now, err := os.Stat(path)
	return err == nil && os.SameFile(now, info)
}

// release releases the lock; it may be called on nil and more than once.
func (l *folderLock) release() {
	if l == nil || l.f == nil {
		return
	}
	unlock(l.f)
	l.f.Close()
	l.f = nil
}
