package data

import (
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"gonum.org/v1/gonum/mat"
)

// TestCheckRefusesFilesThatAreNotMatrices: a matrix file that is a FIFO,
// a device, a dangling link or too large is an error naming the file,
// found at once (a read that blocked would fail the test by its timer),
// and a dangling link never silently excludes its participant.
func TestCheckRefusesFilesThatAreNotMatrices(t *testing.T) {
	fc := "1 0.2 0.1\n0.2 1 0.3\n0.1 0.3 1\n"
	for _, tc := range []struct {
		name string
		make func(t *testing.T, path string) // replaces fc/s2.txt
		want string
	}{
		{"named pipe", func(t *testing.T, path string) {
			if err := mkfifo(path); err != nil {
				t.Skipf("no FIFO here: %v", err)
			}
		}, "s2.txt: not a regular file but a named pipe (FIFO)"},
		{"link to /dev/zero", func(t *testing.T, path string) {
			if _, err := os.Stat("/dev/zero"); err != nil {
				t.Skip("no /dev/zero here")
			}
			if err := os.Symlink("/dev/zero", path); err != nil {
				t.Fatal(err)
			}
		}, "s2.txt: not a regular file but a character device"},
		{"dangling link", func(t *testing.T, path string) {
			if err := os.Symlink("gone.txt", path); err != nil {
				t.Fatal(err)
			}
		}, `s2.txt: a symbolic link to "gone.txt", which does not exist`},
		{"folder", func(t *testing.T, path string) {
			if err := os.Mkdir(path, 0o755); err != nil {
				t.Fatal(err)
			}
		}, "s2.txt: not a regular file but a folder"},
		{"far larger than p × p", func(t *testing.T, path string) {
			// s1 sets p = 3: at most 64 KiB + 64·9 + 1024·4 bytes of text.
			big := fc + strings.Repeat(" ", 80000) + "\n"
			if err := os.WriteFile(path, []byte(big), 0o644); err != nil {
				t.Fatal(err)
			}
		}, "s2.txt: file of 80"},
		{"1e308", func(t *testing.T, path string) {
			if err := os.WriteFile(path, []byte("1 1e308 0.1\n1e308 1 0.3\n0.1 0.3 1\n"), 0o644); err != nil {
				t.Fatal(err)
			}
		}, "s2.txt: line 1, column 2: entry (1, 2) is 1e+308; expected a magnitude of at most 1e+100"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			dir := writeCohort(t, map[string]string{
				"participants.csv": "participant_id,score\ns1,1\ns2,2\ns3,3\n",
				"fc/s1.txt":        fc, "fc/s3.txt": fc,
			})
			tc.make(t, filepath.Join(dir, "fc", "s2.txt"))
			src := Source{Participants: "participants.csv", Targets: []string{"score"}, MinParticipants: new(1),
				Functional: &Modality{Files: "fc/{participant_id}.txt", Values: ValuesAny}}
			done := make(chan error, 1)
			go func() {
				_, _, err := Check(src, rawValues(), dir)
				done <- err
			}()
			select {
			case err := <-done:
				if err == nil || !strings.Contains(err.Error(), tc.want) {
					t.Fatalf("error %v, want one holding %q", err, tc.want)
				}
			case <-time.After(10 * time.Second):
				t.Fatal("Check still reading after 10 s")
			}
		})
	}
}

// TestCheckPreprocessedNamesTheEntry: an entry that preprocessing made
// infinite or NaN is an error naming the file, its line and column and the
// preprocessing table.
func TestCheckPreprocessedNamesTheEntry(t *testing.T) {
	tm, err := parseMatrixText("fc/s1.txt", []byte("a b\na 1 2\nb 2 1\n"))
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name  string
		value float64
		want  string
	}{
		{"fine", 0.5, ""},
		{"+Inf", math.Inf(1), "fc/s1.txt: line 2, column 3: entry (1, 2) is +Inf after preprocessing (see [preprocess.functional])"},
		{"NaN", math.NaN(), "fc/s1.txt: line 2, column 3: entry (1, 2) is NaN after preprocessing"},
		{"huge", 1e200, "entry (1, 2) is 1e+200 after preprocessing"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			a := mat.DenseCopyOf(tm.m)
			a.Set(0, 1, tc.value)
			err := checkPreprocessed("functional", &matrixFile{a: a, path: "fc/s1.txt", where: tm.position})
			if tc.want == "" {
				if err != nil {
					t.Fatal(err)
				}
				return
			}
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("error %v, want one holding %q", err, tc.want)
			}
		})
	}
}
