package eval

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// shardData is a deterministic N×cols array and N labels standing for a
// run's features: row r, column c holds (r·cols + c)/7 − 3, not exactly
// representable, so any reordering or rounding shows in the bytes.
func shardData(n, cols int) ([]float32, []int) {
	flat := make([]float32, n*cols)
	for i := range flat {
		flat[i] = float32(i)/7 - 3
	}
	labels := make([]int, n)
	for i := range labels {
		labels[i] = (i * 5) % 3
	}
	return flat, labels
}

// writeShards writes the n shards of flat/labels into dir in the given order.
func writeShards(t *testing.T, dir string, order []int, n int, flat []float32, cols int, labels []int) {
	t.Helper()
	for _, i := range order {
		lo, hi := ShardRange(i, n, len(labels))
		m := ShardMeta{Kind: "features", Model: "m.striate", ModelSHA256: "ab12", Data: "depot-test", Total: len(labels),
			Shard: i, Shards: n, Lo: lo, Hi: hi, Cols: cols, Classes: []string{"coat", "shirt", "bag"}}
		if err := WriteShard(dir, m, flat[lo*cols:hi*cols], labels[lo:hi]); err != nil {
			t.Fatal(err)
		}
	}
}

// sameAsWhole writes the merged arrays m and checks that the files are byte
// for byte those of the unsharded run in whole.
func sameAsWhole(t *testing.T, what, whole string, m *Merged) {
	t.Helper()
	merged := t.TempDir()
	if err := WriteArrays(merged, "features", "", m.Flat, m.Meta.Cols, m.Labels); err != nil {
		t.Fatal(err)
	}
	for _, f := range []string{"features.npy", "labels.npy"} {
		a, _ := os.ReadFile(filepath.Join(whole, f))
		b, _ := os.ReadFile(filepath.Join(merged, f))
		if len(a) == 0 || !bytes.Equal(a, b) {
			t.Errorf("%s: merged %s (%d bytes) differs from the single run's (%d bytes)", what, f, len(b), len(a))
		}
	}
}

// TestMergeEqualsSingleRun: for several shard counts (including more shards
// than images, so some are empty) and any writing order, the merged arrays
// written out are byte for byte the files of one unsharded run.
func TestMergeEqualsSingleRun(t *testing.T) {
	const cols = 6
	for _, c := range []struct{ rows, n int }{{17, 1}, {17, 3}, {17, 4}, {5, 7}, {0, 2}} {
		flat, labels := shardData(c.rows, cols)
		whole := t.TempDir()
		if err := WriteArrays(whole, "features", "", flat, cols, labels); err != nil {
			t.Fatal(err)
		}
		sh := t.TempDir()
		order := make([]int, c.n)
		for i := range order {
			order[i] = c.n - 1 - i // last shard first
		}
		writeShards(t, sh, order, c.n, flat, cols, labels)
		m, err := MergeShards(sh, "features")
		if err != nil {
			t.Fatalf("%d rows in %d shards: %v", c.rows, c.n, err)
		}
		if m.Shards != c.n || m.Meta.Shards != 1 || m.Meta.Lo != 0 || m.Meta.Hi != c.rows || len(m.Rows()) != c.rows {
			t.Errorf("merged meta %+v of %d shards", m.Meta, m.Shards)
		}
		sameAsWhole(t, fmt.Sprintf("%d rows in %d shards", c.rows, c.n), whole, m)
	}
}

// TestShardRangeTiles: the ranges of shards 0..n-1 tile [0, total) in order
// and differ in size by at most one.
func TestShardRangeTiles(t *testing.T) {
	for _, total := range []int{0, 1, 9, 10000} {
		for _, n := range []int{1, 2, 3, 7, 64} {
			next, small, big := 0, total, 0
			for i := range n {
				lo, hi := ShardRange(i, n, total)
				if lo != next || hi < lo {
					t.Fatalf("total %d, shard %d/%d: [%d, %d) after %d", total, i, n, lo, hi, next)
				}
				next, small, big = hi, min(small, hi-lo), max(big, hi-lo)
			}
			if next != total || big-small > 1 {
				t.Errorf("total %d in %d shards: end %d, sizes %d..%d", total, n, next, small, big)
			}
		}
	}
}

// TestMergeRefusesBadSets: a missing shard, a shard of another model and a
// damaged array are each refused with a message saying what is wrong.
func TestMergeRefusesBadSets(t *testing.T) {
	const cols = 3
	flat, labels := shardData(10, cols)
	if _, err := MergeShards(t.TempDir(), "features"); err == nil || !strings.Contains(err.Error(), "no features shards") {
		t.Errorf("empty folder: %v", err)
	}
	partial := t.TempDir()
	writeShards(t, partial, []int{0, 2}, 3, flat, cols, labels)
	if _, err := MergeShards(partial, "features"); err == nil || !strings.Contains(err.Error(), "found 2 of 3 shards (have 0, 2)") {
		t.Errorf("missing shard: %v", err)
	}
	mixed := t.TempDir()
	writeShards(t, mixed, []int{0, 1}, 2, flat, cols, labels)
	lo, hi := ShardRange(1, 2, 10)
	other := ShardMeta{Kind: "features", ModelSHA256: "ffff", Data: "depot-test", Total: 10, Shard: 1, Shards: 2, Lo: lo, Hi: hi, Cols: cols,
		Classes: []string{"coat", "shirt", "bag"}}
	if err := WriteShard(mixed, other, flat[lo*cols:hi*cols], labels[lo:hi]); err != nil {
		t.Fatal(err)
	}
	if _, err := MergeShards(mixed, "features"); err == nil || !strings.Contains(err.Error(), "does not belong") {
		t.Errorf("shard of another model: %v", err)
	}
	torn := t.TempDir()
	writeShards(t, torn, []int{0, 1}, 2, flat, cols, labels)
	p := filepath.Join(torn, "features"+ShardSuffix(1, 2)+".npy")
	b, _ := os.ReadFile(p)
	os.WriteFile(p, b[:len(b)-4], 0o644)
	if _, err := MergeShards(torn, "features"); err == nil || !strings.Contains(err.Error(), "NPY") {
		t.Errorf("truncated shard array: %v", err)
	}
	for _, s := range []string{"3/3", "-1/2", "1", "a/b", "0/0"} {
		if _, _, err := ParseShard(s); err == nil {
			t.Errorf("ParseShard(%q) accepted", s)
		}
	}
	if i, n, err := ParseShard("2/5"); err != nil || i != 2 || n != 5 {
		t.Errorf("ParseShard(2/5) = %d, %d, %v", i, n, err)
	}
}

// env is a fixed environment for ResolveShard.
func env(kv ...string) func(string) (string, bool) {
	m := map[string]string{}
	for j := 0; j+1 < len(kv); j += 2 {
		m[kv[j]] = kv[j+1]
	}
	return func(k string) (string, bool) { v, ok := m[k]; return v, ok }
}

// slurmTask is the environment of one task of sbatch --array=lo-hi:step
// with count tasks, as sbatch(1) lists its variables (from memory); an
// empty count leaves SLURM_ARRAY_TASK_COUNT unset, as older Slurm did.
func slurmTask(id, lo, hi, step int, count string) func(string) (string, bool) {
	kv := []string{EnvSlurmTaskID, strconv.Itoa(id), EnvSlurmTaskMin, strconv.Itoa(lo), EnvSlurmTaskMax, strconv.Itoa(hi),
		EnvSlurmTaskStep, strconv.Itoa(step), "SLURM_ARRAY_JOB_ID", "4711"}
	if count != "" {
		kv = append(kv, EnvSlurmTaskCount, count)
	}
	return env(kv...)
}

// TestResolveShard: "i/n" as ParseShard; "auto" numbers Slurm array tasks
// of any even range (0-based, 1-based, stepped, without COUNT) and
// Kubernetes indexed pods given the count; every missing, malformed or
// inconsistent environment is refused with a message naming the variable.
func TestResolveShard(t *testing.T) {
	for _, c := range []struct {
		spec         string
		lookup       func(string) (string, bool)
		wantI, wantN int
	}{
		{"2/5", env(), 2, 5},
		{"2/5", slurmTask(0, 0, 3, 1, "4"), 2, 5}, // an explicit shard wins over the environment
		{"auto", slurmTask(0, 0, 7, 1, "8"), 0, 8},
		{"auto", slurmTask(7, 0, 7, 1, "8"), 7, 8},
		{"auto", slurmTask(3, 1, 8, 1, "8"), 2, 8},   // --array=1-8
		{"auto", slurmTask(12, 0, 28, 4, "8"), 3, 8}, // --array=0-28:4
		{"auto", slurmTask(8, 0, 10, 4, "3"), 2, 3},  // --array=0-10:4 runs 0, 4, 8
		{"auto", slurmTask(5, 2, 6, 1, ""), 3, 5},    // no COUNT: from MIN and MAX
		{"auto/8", slurmTask(3, 1, 8, 1, "8"), 2, 8},
		{"auto/8", env(EnvK8sIndex, "0"), 0, 8},
		{"auto/8", env(EnvK8sIndex, "7"), 7, 8},
	} {
		i, n, err := ResolveShard(c.spec, c.lookup)
		if err != nil || i != c.wantI || n != c.wantN {
			t.Errorf("ResolveShard(%q) = %d/%d, %v; want %d/%d", c.spec, i, n, err, c.wantI, c.wantN)
		}
	}
	for _, c := range []struct {
		spec   string
		lookup func(string) (string, bool)
		want   string
	}{
		{"auto", env(), "neither SLURM_ARRAY_TASK_ID"},
		{"auto", env(EnvK8sIndex, "3"), "auto/N"},
		{"auto/4", env(EnvK8sIndex, "4"), "outside 0 to 3"},
		{"auto/4", env(EnvK8sIndex, "x"), `JOB_COMPLETION_INDEX="x"`},
		{"auto/0", env(EnvK8sIndex, "0"), "auto/n with n ≥ 1"},
		{"auto/", env(EnvK8sIndex, "0"), "auto/n with n ≥ 1"},
		{"autox", env(EnvK8sIndex, "0"), "auto/n with n ≥ 1"},
		{"auto", env(EnvK8sIndex, "0", EnvSlurmTaskID, "0"), "both"},
		{"auto", env(EnvSlurmTaskID, "2"), "SLURM_ARRAY_TASK_MIN is not set"},
		{"auto", slurmTask(9, 0, 7, 1, "8"), "inconsistent"},
		{"auto", slurmTask(2, 1, 9, 1, "3"), "not one even range"}, // --array=1,2,9
		{"auto", slurmTask(5, 0, 28, 4, "8"), "not one even range"},
		{"auto", slurmTask(1, 0, 3, 0, "4"), "STEP ≥ 1"},
		{"auto/3", slurmTask(1, 0, 3, 1, "4"), "has 4 tasks, not 3"},
		{"auto", slurmTask(1, 0, 3, 1, "four"), `SLURM_ARRAY_TASK_COUNT="four"`},
	} {
		if i, n, err := ResolveShard(c.spec, c.lookup); err == nil || !strings.Contains(err.Error(), c.want) || !strings.HasPrefix(err.Error(), "eval: ") {
			t.Errorf("ResolveShard(%q) = %d/%d, %v; want an error with %q", c.spec, i, n, err, c.want)
		}
	}
}

// TestMergeOfEnvironmentShards: shards numbered from each scheduler's
// environment (a 1-based Slurm array, a stepped one without COUNT, a
// Kubernetes indexed Job) tile the data, and their merge is byte for byte
// one unsharded run.
func TestMergeOfEnvironmentShards(t *testing.T) {
	const rows, cols = 23, 5
	flat, labels := shardData(rows, cols)
	whole := t.TempDir()
	if err := WriteArrays(whole, "features", "", flat, cols, labels); err != nil {
		t.Fatal(err)
	}
	for name, tasks := range map[string][]struct {
		spec   string
		lookup func(string) (string, bool)
	}{
		"slurm --array=1-4":     {{"auto", slurmTask(4, 1, 4, 1, "4")}, {"auto", slurmTask(2, 1, 4, 1, "4")}, {"auto", slurmTask(1, 1, 4, 1, "4")}, {"auto", slurmTask(3, 1, 4, 1, "4")}},
		"slurm --array=0-10:5":  {{"auto", slurmTask(10, 0, 10, 5, "")}, {"auto", slurmTask(0, 0, 10, 5, "")}, {"auto", slurmTask(5, 0, 10, 5, "")}},
		"kubernetes indexed x3": {{"auto/3", env(EnvK8sIndex, "2")}, {"auto/3", env(EnvK8sIndex, "0")}, {"auto/3", env(EnvK8sIndex, "1")}},
	} {
		dir := t.TempDir()
		for _, task := range tasks {
			i, n, err := ResolveShard(task.spec, task.lookup)
			if err != nil {
				t.Fatalf("%s: %v", name, err)
			}
			if n != len(tasks) {
				t.Fatalf("%s: %d shards from the environment; the array has %d tasks", name, n, len(tasks))
			}
			writeShards(t, dir, []int{i}, n, flat, cols, labels)
		}
		m, err := MergeShards(dir, "features")
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		sameAsWhole(t, name, whole, m)
	}
}
