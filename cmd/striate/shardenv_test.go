package main

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// runWithEnv runs the binary with extra environment variables (and without
// any scheduler variables of the test's own environment) and checks the
// exit code.
func runWithEnv(t *testing.T, code int, env []string, args ...string) cliResult {
	t.Helper()
	cmd := exec.Command(cliBin, args...)
	for _, kv := range os.Environ() {
		if !strings.HasPrefix(kv, "SLURM_") && !strings.HasPrefix(kv, "JOB_COMPLETION_INDEX=") {
			cmd.Env = append(cmd.Env, kv)
		}
	}
	cmd.Env = append(cmd.Env, env...)
	var o, e bytes.Buffer
	cmd.Stdout, cmd.Stderr = &o, &e
	err := cmd.Run()
	r := cliResult{0, o.String(), e.String()}
	if ee, ok := err.(*exec.ExitError); ok {
		r.code = ee.ExitCode()
	} else if err != nil {
		t.Fatal(err)
	}
	wantCode(t, r, code, args...)
	return r
}

// TestCLIShardsFromEnvironment: evaluate and extract with --shard auto in
// the tasks of a Slurm job array (sbatch --array=1-3, the variables sbatch
// sets; from memory) and of a Kubernetes indexed Job (JOB_COMPLETION_INDEX
// with --shard auto/3), merged, give files byte for byte those of one
// unsharded run; outside an array task --shard auto is a usage error.
func TestCLIShardsFromEnvironment(t *testing.T) {
	cliFixture(t)
	tmp := t.TempDir()
	slurm := func(id string) []string {
		return []string{"SLURM_ARRAY_JOB_ID=812", "SLURM_ARRAY_TASK_ID=" + id, "SLURM_ARRAY_TASK_COUNT=3",
			"SLURM_ARRAY_TASK_MIN=1", "SLURM_ARRAY_TASK_MAX=3", "SLURM_ARRAY_TASK_STEP=1"}
	}
	for _, c := range []struct {
		cmd, kind string
		shard     string
		tasks     [][]string
	}{
		{"evaluate", "predictions", "auto", [][]string{slurm("3"), slurm("1"), slurm("2")}},
		{"extract", "features", "auto/3", [][]string{{"JOB_COMPLETION_INDEX=1"}, {"JOB_COMPLETION_INDEX=2"}, {"JOB_COMPLETION_INDEX=0"}}},
	} {
		whole := filepath.Join(tmp, c.cmd+"-whole")
		runWithEnv(t, 0, nil, c.cmd, "--model", cliModelA, "--data", cliTest, "--out", whole, "--quiet")
		shards := filepath.Join(tmp, c.cmd+"-shards")
		for _, env := range c.tasks {
			runWithEnv(t, 0, env, c.cmd, "--model", cliModelA, "--data", cliTest, "--out", shards, "--shard", c.shard, "--quiet")
		}
		runWithEnv(t, 0, nil, c.cmd, "--merge", "--out", shards, "--quiet")
		sameFiles(t, c.cmd+" shards chosen by the environment", whole, shards, c.kind+".npy", "labels.npy")
	}
	r := runWithEnv(t, 2, nil, "extract", "--model", cliModelA, "--data", cliTest, "--out", tmp, "--shard", "auto")
	if !strings.Contains(r.stderr, "neither SLURM_ARRAY_TASK_ID") {
		t.Errorf("--shard auto outside an array task said:\n%s", r.stderr)
	}
	r = runWithEnv(t, 2, []string{"JOB_COMPLETION_INDEX=0"}, "extract", "--model", cliModelA, "--data", cliTest, "--out", tmp, "--shard", "auto")
	if !strings.Contains(r.stderr, "--shard auto/N") {
		t.Errorf("--shard auto in an indexed Job without the count said:\n%s", r.stderr)
	}
}

// sameFiles checks that the files names in folder got are byte for byte
// those in folder want.
func sameFiles(t *testing.T, what, want, got string, names ...string) {
	t.Helper()
	for _, f := range names {
		a, err := os.ReadFile(filepath.Join(want, f))
		if err != nil {
			t.Fatal(err)
		}
		b, err := os.ReadFile(filepath.Join(got, f))
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(a, b) {
			t.Errorf("%s: merged %s differs from the unsharded file", what, f)
		}
	}
}
