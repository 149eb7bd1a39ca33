package experiment

import (
	"bufio"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strings"
	"syscall"
	"testing"
	"time"
)

func TestRunDirKeepsEarlierResults(t *testing.T) {
	final := filepath.Join(t.TempDir(), "run")
	d, err := OpenRunDir(final, false, false)
	if err != nil {
		t.Fatal(err)
	}
	if err := d.WriteFile("result.txt", []byte("first")); err != nil {
		t.Fatal(err)
	}
	if err := d.Commit(); err != nil {
		t.Fatal(err)
	}
	if _, err := OpenRunDir(final, false, false); !errors.Is(err, ErrRunExists) {
		t.Fatalf("reopening without force: %v, want ErrRunExists", err)
	}
	// A forced run that fails before committing leaves the first intact.
	d, err = OpenRunDir(final, true, false)
	if err != nil {
		t.Fatal(err)
	}
	d.WriteFile("result.txt", []byte("second"))
	d.Close() // the run failed: its process let go of the work folder
	if got, _ := os.ReadFile(filepath.Join(final, "result.txt")); string(got) != "first" {
		t.Fatalf("before commit the run folder holds %q, want the first run's", got)
	}
	// Its work folder is an interrupted run: refused unless resumed or forced.
	if _, err := OpenRunDir(final, false, false); err == nil {
		t.Fatal("an interrupted run's work folder was silently reused")
	}
	d, err = OpenRunDir(final, true, true)
	if err != nil {
		t.Fatal(err)
	}
	if err := d.Commit(); err != nil {
		t.Fatal(err)
	}
	if got, _ := os.ReadFile(filepath.Join(final, "result.txt")); string(got) != "second" {
		t.Fatalf("after a forced commit the run folder holds %q, want the second run's", got)
	}
}

// TestRunDirLock: a work folder in use by another run is refused, with
// the holder's pid and nothing created or removed, whatever --force and
// --resume say; units of a plan (shared) run side by side but keep runs,
// plans and merges (exclusive) out; a closed or committed folder is free.
func TestRunDirLock(t *testing.T) {
	for _, tc := range []struct {
		name                  string
		holderShared          bool
		force, resume, shared bool
		busy                  bool
	}{
		{"resume of a running run", false, false, true, false, true},
		{"forced start over of a running run", false, true, false, false, true},
		{"plain run into a running run's folder", false, false, false, false, true},
		{"unit beside a running run", false, false, true, true, true},
		{"unit beside a unit", true, false, true, true, false},
		{"resume beside running units", true, false, true, false, true},
		{"forced plan beside running units", true, true, false, false, true},
	} {
		t.Run(tc.name, func(t *testing.T) {
			final := filepath.Join(t.TempDir(), "run")
			holder, err := openRunDir(final, false, false, tc.holderShared)
			if err != nil {
				t.Fatal(err)
			}
			defer holder.Close()
			holder.WriteFile("unit.txt", []byte("done"))
			d, err := openRunDir(final, tc.force, tc.resume, tc.shared)
			if !tc.busy {
				if err != nil {
					t.Fatal(err)
				}
				d.Close()
				return
			}
			if err == nil {
				d.Close()
				t.Fatal("opened a work folder another run holds")
			}
			if want := fmt.Sprintf("run.partial is in use by another skein process (pid %d)", os.Getpid()); !tc.holderShared && !strings.Contains(err.Error(), want) {
				t.Errorf("error %q, want it to hold %q", err, want)
			}
			if got, _ := os.ReadFile(filepath.Join(final+".partial", "unit.txt")); string(got) != "done" {
				t.Error("the refused open changed the holder's work folder")
			}
			holder.Close()
			d, err = openRunDir(final, false, true, false)
			if err != nil {
				t.Fatalf("after the holder let go: %v", err)
			}
			if err := d.Commit(); err != nil {
				t.Fatal(err)
			}
			if _, err := os.Stat(filepath.Join(final, lockName)); !errors.Is(err, fs.ErrNotExist) {
				t.Errorf("the committed run folder keeps its lock file: %v", err)
			}
		})
	}
}

// TestRunDirLockDiesWithItsProcess: a run killed with SIGKILL leaves its
// work folder free to resume at once (flock(2) locks go with the process).
func TestRunDirLockDiesWithItsProcess(t *testing.T) {
	if dir := os.Getenv("SKEIN_TEST_HOLD_LOCK"); dir != "" {
		if _, err := OpenRunDir(dir, false, false); err != nil {
			fmt.Println(err)
			os.Exit(1)
		}
		fmt.Println("locked")
		time.Sleep(time.Minute)
		os.Exit(0)
	}
	if runtime.GOOS == "windows" {
		t.Skip("no flock(2)")
	}
	final := filepath.Join(t.TempDir(), "run")
	cmd := exec.Command(os.Args[0], "-test.run", "^TestRunDirLockDiesWithItsProcess$")
	cmd.Env = append(os.Environ(), "SKEIN_TEST_HOLD_LOCK="+final)
	out, err := cmd.StdoutPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	line, _ := bufio.NewReader(out).ReadString('\n')
	if strings.TrimSpace(line) != "locked" {
		cmd.Process.Kill()
		cmd.Wait()
		t.Fatalf("the holder said %q", line)
	}
	if _, err := OpenRunDir(final, false, true); err == nil || !strings.Contains(err.Error(), "in use by another skein process") {
		t.Errorf("while the holder runs: %v, want the folder in use", err)
	}
	cmd.Process.Signal(syscall.SIGKILL)
	cmd.Wait()
	d, err := OpenRunDir(final, false, true)
	if err != nil {
		t.Fatalf("after kill -9 of the holder: %v", err)
	}
	d.Close()
}
