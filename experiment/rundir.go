package experiment

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"time"

	"github.com/skein-neuro/skein/internal/atomicfile"
	"github.com/skein-neuro/skein/train"
)

// RunDir is the output folder of one run. Everything is first written into
// a sibling work folder, Final + ".partial", and the work folder becomes
// Final only when the run has finished, so a failed or interrupted run
// never touches earlier results. An interrupted run's work folder keeps
// its finished units for OpenRunDir's resume. While a RunDir is open its
// work folder is locked (see OpenRunDir); Close or Commit releases it.
type RunDir struct {
	Final   string
	Partial string
	force   bool
	lock    *folderLock
}

// ErrRunExists is wrapped by OpenRunDir's error when the output folder
// exists and replacing it was not asked for.
var ErrRunExists = errors.New("output folder exists")

// OpenRunDir prepares the work folder of a run whose results go to final.
// An existing final folder is an error unless force is set, in which case
// it is replaced only when the new run commits. An existing work folder
// (an interrupted run) is an error unless resume is set, which continues
// it, or force, which starts over. The work folder is locked for this
// process alone (flock(2) on its lock file, released when the process
// ends, however it ends): a work folder another process holds, a running
// run or units of a plan, is an error saying so, whatever force and
// resume say, and nothing is created or removed.
func OpenRunDir(final string, force, resume bool) (*RunDir, error) {
	return openRunDir(final, force, resume, false)
}

// openRunDir is OpenRunDir; with shared, the lock is shared with other
// shared holders (the units of a plan, which run side by side) and
// excludes only exclusive ones.
func openRunDir(final string, force, resume, shared bool) (*RunDir, error) {
	d := &RunDir{Final: filepath.Clean(final), force: force}
	d.Partial = d.Final + ".partial"
	if _, err := os.Stat(d.Final); err == nil && !force {
		return nil, fmt.Errorf("%s: %w; choose another --out or pass --force to replace it", d.Final, ErrRunExists)
	}
	switch _, err := os.Stat(d.Partial); {
	case err == nil:
		lock, err := lockWorkFolder(d.Partial, shared)
		if err != nil {
			return nil, err
		}
		switch {
		case resume:
			d.lock = lock
			return d, os.MkdirAll(filepath.Join(d.Partial, "units"), 0o755)
		case !force:
			lock.release()
			return nil, fmt.Errorf("%s holds an interrupted run: pass --resume to finish it or --force to start over", d.Partial)
		}
		err = os.RemoveAll(d.Partial)
		lock.release()
		if err != nil {
			return nil, err
		}
	case !errors.Is(err, fs.ErrNotExist):
		return nil, err
	case resume:
		return nil, fmt.Errorf("--resume: %s holds no interrupted run", d.Partial)
	}
	if err := os.MkdirAll(filepath.Join(d.Partial, "units"), 0o755); err != nil {
		return nil, err
	}
	lock, err := lockWorkFolder(d.Partial, shared)
	if err != nil {
		return nil, err
	}
	d.lock = lock
	return d, nil
}

// maxRunSuffix bounds the suffixes CreateRunDir tries.
const maxRunSuffix = 1000

// CreateRunDir prepares the work folder of a new run whose results go to
// base or, when a run folder or work folder of that name exists already
// (two runs started in the same second), to the first free base-2,
// base-3, .... The name is claimed atomically by creating its work folder
// (os.Mkdir fails when another run created it first), so concurrent runs
// never share one.
func CreateRunDir(base string) (*RunDir, error) {
	base = filepath.Clean(base)
	if err := os.MkdirAll(filepath.Dir(base), 0o755); err != nil {
		return nil, err
	}
	for k := 1; k <= maxRunSuffix; k++ {
		final := base
		if k > 1 {
			final = fmt.Sprintf("%s-%d", base, k)
		}
		if _, err := os.Lstat(final); err == nil {
			continue
		}
		d := &RunDir{Final: final, Partial: final + ".partial"}
		if err := os.Mkdir(d.Partial, 0o755); errors.Is(err, fs.ErrExist) {
			continue
		} else if err != nil {
			return nil, err
		}
		// A run that committed final between the check above and the
		// Mkdir held final.partial until then; final exists now.
		if _, err := os.Lstat(final); err == nil {
			os.Remove(d.Partial)
			continue
		}
		if err := os.Mkdir(filepath.Join(d.Partial, "units"), 0o755); err != nil {
			return nil, err
		}
		lock, err := lockWorkFolder(d.Partial, false)
		if err != nil {
			return nil, err
		}
		d.lock = lock
		return d, nil
	}
	return nil, fmt.Errorf("%s: %w, and so do the names with suffixes -2 to -%d; pass --out", base, ErrRunExists, maxRunSuffix)
}

// Close releases the lock of the work folder, leaving it as it is; a
// committed RunDir has no lock left. It may be called more than once.
func (d *RunDir) Close() { d.lock.release() }

// WriteFile writes name (a path relative to the run folder) atomically in
// the work folder: into a temporary file, then renamed.
func (d *RunDir) WriteFile(name string, content []byte) error {
	return atomicfile.WriteFile(filepath.Join(d.Partial, name), content)
}

// WriteWith writes name (a path relative to the run folder) atomically in
// the work folder with what write writes; nothing is written when write
// fails.
func (d *RunDir) WriteWith(name string, write func(io.Writer) error) error {
	if err := atomicfile.WriteWith(filepath.Join(d.Partial, name), write); err != nil {
		return fmt.Errorf("%s: %w", name, err)
	}
	return nil
}

// Path returns where name will be found once the run is committed.
func (d *RunDir) Path(name string) string { return filepath.Join(d.Final, name) }

// WorkPath returns where name is while the run is being written.
func (d *RunDir) WorkPath(name string) string { return filepath.Join(d.Partial, name) }

// train.Checkpoints returns the unit checkpoints of the work folder.
func (d *RunDir) Checkpoints() *train.Checkpoints {
	return train.NewCheckpoints(filepath.Join(d.Partial, "units"))
}

// ModelsDir returns the folder of the work folder where fold models are
// saved.
func (d *RunDir) ModelsDir() string { return filepath.Join(d.Partial, "models") }

// CheckResume makes sure a resumed run continues the same experiment: the
// resolved experiment file of the work folder, when present, must equal
// resolved.
func (d *RunDir) CheckResume(resolvedName string, resolved []byte) error {
	old, err := os.ReadFile(filepath.Join(d.Partial, resolvedName))
	if errors.Is(err, fs.ErrNotExist) {
		return nil
	}
	if err != nil {
		return err
	}
	if !bytes.Equal(old, resolved) {
		return fmt.Errorf("%s: the interrupted run used another experiment file; pass --force to start over", d.Partial)
	}
	return nil
}

// Commit makes the work folder the run's folder, replacing an earlier one
// when the run was opened with force, and releases the lock (its file is
// removed from the run folder).
func (d *RunDir) Commit() error {
	defer d.Close()
	var old string
	if _, err := os.Stat(d.Final); err == nil {
		if !d.force {
			return fmt.Errorf("%s: %w", d.Final, ErrRunExists)
		}
		old = fmt.Sprintf("%s.old-%d", d.Final, time.Now().UnixNano())
		if err := os.Rename(d.Final, old); err != nil {
			return err
		}
	}
	if err := os.Rename(d.Partial, d.Final); err != nil {
		if old != "" {
			os.Rename(old, d.Final)
		}
		return err
	}
	if err := os.Remove(filepath.Join(d.Final, lockName)); err != nil && !errors.Is(err, fs.ErrNotExist) {
		return err
	}
	if old != "" {
		return os.RemoveAll(old)
	}
	return nil
}
