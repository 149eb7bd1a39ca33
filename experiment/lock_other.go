//go:build !unix

package experiment

import "os"

// tryLock does nothing where flock(2) is missing: work folders are not
// locked there, and two runs of one folder must be avoided by hand.
func tryLock(f *os.File, shared bool) error { return nil }

// unlock does nothing where flock(2) is missing.
func unlock(f *os.File) {}
