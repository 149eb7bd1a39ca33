package main

import (
	"bytes"
	"net"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/skein-neuro/skein/internal/blas"
)

// clusterExperiment is the experiment of the cluster tests: two baselines,
// 3 folds and 8 permutations in blocks of 4: 6 + 4 units.
const clusterExperiment = `
[cv]
folds = 3

[permutation]
count = 8
chunk = 4

[[model]]
name = "mean"
[model.mean]

[[model]]
name = "ridge"
[model.ridge]
`

// baselineFiles are resultFiles without learning curves, which baselines
// do not have.
var baselineFiles = []string{"predictions.csv", "metrics.json", "summary.md", "permutations.csv", "experiment.toml", "cohort.json"}

// buildSkein builds the skein program into a temporary folder, for the
// tests that run it as a batch job would, with the BLAS of the test itself
// so that its results can equal the in-process ones.
func buildSkein(t *testing.T) string {
	t.Helper()
	bin := filepath.Join(t.TempDir(), "skein")
	args := []string{"build", "-o", bin}
	if blas.Name() == "openblas" {
		args = append(args, "-tags", "openblas")
	}
	cmd := exec.Command("go", append(args, ".")...)
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}
	return bin
}

// execOK runs name with args and returns its output, failing the test
// when it fails.
func execOK(t *testing.T, env []string, name string, args ...string) string {
	t.Helper()
	cmd := exec.Command(name, args...)
	cmd.Env = append(os.Environ(), env...)
	var stdout, stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	if err := cmd.Run(); err != nil {
		t.Fatalf("%s %s: %v\n%s%s", name, strings.Join(args, " "), err, stdout.String(), stderr.String())
	}
	return stdout.String()
}

// The plan's units run without a scheduler, from units.tsv through xargs
// as the README shows, and merge into the single-machine run.
func TestPlanRunsThroughXargs(t *testing.T) {
	t.Parallel()
	if testing.Short() {
		t.Skip("-short: the xargs test builds skein and runs every unit as a process")
	}
	for _, cmd := range []string{"xargs", "bash"} {
		if _, err := exec.LookPath(cmd); err != nil {
			t.Skipf("xargs integration test skipped: %s is not installed (Debian's findutils and bash packages)", cmd)
		}
	}
	bin := buildSkein(t)
	exp := writeBatchExperiment(t, 40, clusterExperiment)
	single := filepath.Join(t.TempDir(), "single")
	if code, _, stderr := runSkein(t, "run", exp, "--out", single); code != exitOK {
		t.Fatalf("run: exit %d: %s", code, stderr)
	}
	out := filepath.Join(t.TempDir(), "batch")
	execOK(t, nil, bin, "plan", exp, "--out", out)
	execOK(t, nil, "bash", "-c", `tail -n +2 "$1.partial/units.tsv" | cut -f1 | xargs -P 2 -I{} "$2" run "$3" --out "$1" --jobs 1 --unit {}`,
		"-", out, bin, exp)
	execOK(t, nil, bin, "merge", out)
	compareRuns(t, single, out, baselineFiles)
}

// freePort returns a TCP port nothing listens on at the moment.
func freePort(t *testing.T) string {
	t.Helper()
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	return strconv.Itoa(l.Addr().(*net.TCPAddr).Port)
}

// waitForJob waits until SLURM no longer lists job id.
func waitForJob(t *testing.T, env []string, id string) {
	t.Helper()
	deadline := time.Now().Add(2 * time.Minute)
	for time.Now().Before(deadline) {
		if strings.TrimSpace(execOK(t, env, "squeue", "-h", "-j", id)) == "" {
			return
		}
		time.Sleep(200 * time.Millisecond)
	}
	t.Fatalf("job %s still queued or running after 2 minutes:\n%s", id, execOK(t, env, "squeue"))
}

// TestSlurmArray runs a plan as a job array on a real, single-node SLURM
// cluster started for the test (scripts/slurm-local.sh), resubmits two
// lost units with the command merge prints, and checks that the merged run
// equals the single-machine run. It needs root and Debian's slurm-wlm and
// munge packages, and is skipped without them.
func TestSlurmArray(t *testing.T) {
	t.Parallel()
	if testing.Short() {
		t.Skip("-short: the SLURM integration test starts daemons")
	}
	for _, cmd := range []string{"slurmctld", "slurmd", "sbatch", "squeue", "sinfo", "munged", "mungekey", "runuser"} {
		if _, err := exec.LookPath(cmd); err != nil {
			t.Skipf("SLURM integration test skipped: %s is not installed (apt-get install -y slurm-wlm munge)", cmd)
		}
	}
	if os.Geteuid() != 0 {
		t.Skip("SLURM integration test skipped: starting munged and the SLURM daemons needs root")
	}
	bin := buildSkein(t)

	// The cluster's folder must be reachable by the munge user: not under
	// t.TempDir, whose parent only root may enter.
	state, err := os.MkdirTemp("", "skein-slurm-")
	if err != nil {
		t.Fatal(err)
	}
	script, err := filepath.Abs(filepath.Join("..", "..", "scripts", "slurm-local.sh"))
	if err != nil {
		t.Fatal(err)
	}
	ports := []string{"SLURMCTLD_PORT=" + freePort(t), "SLURMD_PORT=" + freePort(t)}
	t.Cleanup(func() {
		// Stops the daemons by the pids the script recorded.
		if out, err := exec.Command(script, "stop", state).CombinedOutput(); err != nil {
			t.Errorf("stopping the cluster: %v\n%s", err, out)
		}
		if !t.Failed() {
			os.RemoveAll(state)
		} else {
			t.Logf("the cluster's logs are kept in %s", state)
		}
	})
	execOK(t, ports, script, "start", state)
	env := []string{"SLURM_CONF=" + filepath.Join(state, "slurm.conf")}

	exp := writeBatchExperiment(t, 40, clusterExperiment)
	single := filepath.Join(t.TempDir(), "single")
	if code, _, stderr := runSkein(t, "run", exp, "--out", single); code != exitOK {
		t.Fatalf("run: exit %d: %s", code, stderr)
	}
	out := filepath.Join(t.TempDir(), "batch")
	execOK(t, nil, bin, "plan", exp, "--out", out, "--time", "00:05:00", "--mem", "200M", "--cpus", "1")
	job := filepath.Join(out+".partial", "job.sh")
	id := strings.TrimSpace(execOK(t, env, "sbatch", "--parsable", job))
	waitForJob(t, env, id)
	for k := range 10 {
		if _, err := os.Stat(filepath.Join(out+".partial", "logs", "slurm-"+id+"_"+strconv.Itoa(k)+".out")); err != nil {
			t.Errorf("array task %d left no SLURM output: %v", k, err)
		}
	}

	// Two units lost (a node wiped their files): merge lists them and
	// prints the sbatch line that reruns just those.
	os.Remove(filepath.Join(out+".partial", "units", "ridge", "r1-f2.json"))
	os.Remove(filepath.Join(out+".partial", "nulls", "mean", "p5-8.csv"))
	code, _, stderr := runSkein(t, "merge", out)
	resubmit := regexp.MustCompile(`sbatch --array=(\S+) (\S+)`).FindStringSubmatch(stderr)
	if code == exitOK || resubmit == nil || resubmit[1] != "4,7" || resubmit[2] != job {
		t.Fatalf("merge with two lost units: exit %d, want the resubmission of units 4 and 7 of %s:\n%s", code, job, stderr)
	}
	id = strings.TrimSpace(execOK(t, env, "sbatch", "--parsable", "--array="+resubmit[1], resubmit[2]))
	waitForJob(t, env, id)

	execOK(t, nil, bin, "merge", out)
	compareRuns(t, single, out, baselineFiles)
}
