//go:build unix

package experiment

import (
	"errors"
	"os"
	"syscall"
)

// tryLock takes flock(2) on f without waiting: LOCK_SH when shared, else
// LOCK_EX. It returns errBusy when another open file holds a conflicting
// lock. The system drops the lock when the process ends, however it ends.
func tryLock(f *os.File, shared bool) error {
	how := syscall.LOCK_EX
	if shared {
		how = syscall.LOCK_SH
	}
	for {
		err := syscall.Flock(int(f.Fd()), how|syscall.LOCK_NB)
		switch {
		case err == nil:
			return nil
		case errors.Is(err, syscall.EINTR):
			continue
		case errors.Is(err, syscall.EWOULDBLOCK):
			return errBusy
		default:
			return err
		}
	}
}

// unlock releases the flock of f.
func unlock(f *os.File) { syscall.Flock(int(f.Fd()), syscall.LOCK_UN) }
