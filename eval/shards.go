package eval

// Shards: a long extraction or evaluation is split into n contiguous blocks
// of the data, run as independent jobs (a job array's index i = 0..n-1) and
// merged afterwards. Each shard writes NPY arrays and a JSON description into
// one folder; MergeShards checks the set is complete and consistent and
// concatenates the arrays in image order, so the merged files are byte for
// byte those of one unsharded run.

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/internal/safefile"
)

// ShardMeta describes one shard's output (or, with Shards = 1, a whole
// output). It is written as <kind>-shard-iiiii-of-nnnnn.json beside the
// arrays <kind>-iiiii-of-nnnnn.npy and labels-iiiii-of-nnnnn.npy.
type ShardMeta struct {
	Kind        string   `json:"kind"` // "features" or "predictions"
	Model       string   `json:"model"`
	ModelSHA256 string   `json:"model_sha256"`
	Data        string   `json:"data"`
	DataSpec    string   `json:"data_spec"`
	Total       int      `json:"total"` // images in the whole data set
	Shard       int      `json:"shard"`
	Shards      int      `json:"shards"`
	Lo          int      `json:"lo"` // first image of this shard
	Hi          int      `json:"hi"` // one past its last image
	Cols        int      `json:"cols"`
	Classes     []string `json:"classes"`
}

// ParseShard reads "i/n" with n ≥ 1 and 0 ≤ i < n.
func ParseShard(s string) (i, n int, err error) {
	a, b, ok := strings.Cut(s, "/")
	if ok {
		i, err = strconv.Atoi(a)
		if err == nil {
			n, err = strconv.Atoi(b)
		}
	}
	if !ok || err != nil || n < 1 || i < 0 || i >= n {
		return 0, 0, fmt.Errorf("eval: shard %q; want i/n with n ≥ 1 and i from 0 to n-1 (e.g. 0/4 ... 3/4)", s)
	}
	return i, n, nil
}

// Environment variables of the batch schedulers that ResolveShard reads.
//
// Slurm's sbatch sets, in every task of a job array (sbatch(1), OUTPUT
// ENVIRONMENT VARIABLES; from memory): SLURM_ARRAY_TASK_ID, the task's
// index; SLURM_ARRAY_TASK_COUNT, the number of tasks; SLURM_ARRAY_TASK_MIN
// and SLURM_ARRAY_TASK_MAX, the lowest and highest index; and
// SLURM_ARRAY_TASK_STEP, the step of a range such as --array=0-15:4.
//
// Kubernetes sets JOB_COMPLETION_INDEX, from 0 to completions−1, in each pod
// of a Job with completionMode: Indexed (the Job documentation, "Completion
// mode"; from memory). The pod is not told the Job's completions, so the
// count is given on the command line: --shard auto/N.
const (
	EnvSlurmTaskID    = "SLURM_ARRAY_TASK_ID"
	EnvSlurmTaskCount = "SLURM_ARRAY_TASK_COUNT"
	EnvSlurmTaskMin   = "SLURM_ARRAY_TASK_MIN"
	EnvSlurmTaskMax   = "SLURM_ARRAY_TASK_MAX"
	EnvSlurmTaskStep  = "SLURM_ARRAY_TASK_STEP"
	EnvK8sIndex       = "JOB_COMPLETION_INDEX"
)

// ResolveShard reads a --shard value: "i/n" as ParseShard does, or "auto"
// or "auto/n", which take the shard from the environment of a batch
// scheduler's array task, looked up with lookup (os.LookupEnv in a command):
//
//   - Slurm job array (SLURM_ARRAY_TASK_ID set): the tasks must be an even
//     range MIN, MIN+STEP, ... up to MAX such as --array=0-7, --array=1-8
//     or --array=0-28:4 (STEP 1 when unset), and shard i = (ID−MIN)/STEP of
//     n = SLURM_ARRAY_TASK_COUNT, or ⌊(MAX−MIN)/STEP⌋+1 when COUNT is unset.
//     An array given as a list (--array=1,4,9) cannot be numbered; it is
//     refused when COUNT shows it (3 tasks, not 9), and otherwise its
//     shards fail to merge ("found 3 of 9 shards"). With "auto/n", n must
//     equal the array's count.
//   - Kubernetes indexed Job (JOB_COMPLETION_INDEX set): i is the index and
//     n must be given as "auto/n" (the Job's completions).
//
// A missing, malformed or inconsistent environment is an error naming the
// variables and what they hold; so is an environment with both
// schedulers' variables.
func ResolveShard(s string, lookup func(string) (string, bool)) (i, n int, err error) {
	rest, ok := strings.CutPrefix(s, "auto")
	if !ok {
		return ParseShard(s)
	}
	given := 0
	if rest != "" {
		c, ok := strings.CutPrefix(rest, "/")
		if given, err = strconv.Atoi(c); !ok || err != nil || given < 1 {
			return 0, 0, fmt.Errorf("eval: shard %q; want auto, auto/n with n ≥ 1 (the shard count) or i/n", s)
		}
	}
	_, slurm := lookup(EnvSlurmTaskID)
	_, k8s := lookup(EnvK8sIndex)
	switch {
	case slurm && k8s:
		return 0, 0, fmt.Errorf("eval: shard %q: both %s (Slurm) and %s (Kubernetes) are set; unset the one that does not belong to this job, or give the shard as i/n", s, EnvSlurmTaskID, EnvK8sIndex)
	case slurm:
		return slurmShard(s, given, lookup)
	case k8s:
		if given == 0 {
			return 0, 0, fmt.Errorf("eval: shard \"auto\": %s is set (a Kubernetes indexed Job) but the pod is not told the shard count; use --shard auto/N with N the Job's completions", EnvK8sIndex)
		}
		i, err := envInt(lookup, EnvK8sIndex)
		if err != nil {
			return 0, 0, err
		}
		if i < 0 || i >= given {
			return 0, 0, fmt.Errorf("eval: shard %q: %s=%d is outside 0 to %d; the count after auto/ must be the Job's completions", s, EnvK8sIndex, i, given-1)
		}
		return i, given, nil
	}
	return 0, 0, fmt.Errorf("eval: shard %q: neither %s (a Slurm job array, sbatch --array) nor %s (a Kubernetes Job with completionMode: Indexed) is set; run inside an array task, or give the shard as i/n", s, EnvSlurmTaskID, EnvK8sIndex)
}

// slurmShard numbers a Slurm array task (see ResolveShard).
func slurmShard(s string, given int, lookup func(string) (string, bool)) (i, n int, err error) {
	id, err := envInt(lookup, EnvSlurmTaskID)
	if err != nil {
		return 0, 0, err
	}
	lo, err := envInt(lookup, EnvSlurmTaskMin)
	if err != nil {
		return 0, 0, err
	}
	hi, err := envInt(lookup, EnvSlurmTaskMax)
	if err != nil {
		return 0, 0, err
	}
	step := 1
	if _, ok := lookup(EnvSlurmTaskStep); ok {
		if step, err = envInt(lookup, EnvSlurmTaskStep); err != nil {
			return 0, 0, err
		}
	}
	if step < 1 || lo < 0 || hi < lo || id < lo || id > hi {
		return 0, 0, fmt.Errorf("eval: shard %q: Slurm array task %d with MIN %d, MAX %d, STEP %d is inconsistent; want MIN ≤ ID ≤ MAX and STEP ≥ 1", s, id, lo, hi, step)
	}
	span := (hi-lo)/step + 1
	n = span
	if _, ok := lookup(EnvSlurmTaskCount); ok {
		if n, err = envInt(lookup, EnvSlurmTaskCount); err != nil {
			return 0, 0, err
		}
	}
	if (id-lo)%step != 0 || n != span {
		return 0, 0, fmt.Errorf("eval: shard %q: Slurm array tasks %d-%d step %d with %d tasks (task %d) are not one even range, so tasks cannot be numbered as shards; submit with --array=0-%d (or any MIN-MAX[:STEP] range), or give --shard i/n", s, lo, hi, step, n, id, n-1)
	}
	if given != 0 && given != n {
		return 0, 0, fmt.Errorf("eval: shard %q: the Slurm array has %d tasks, not %d; drop the count (--shard auto) or submit --array with %d tasks", s, n, given, given)
	}
	return (id - lo) / step, n, nil
}

// envInt reads the non-negative integer environment variable name.
func envInt(lookup func(string) (string, bool), name string) (int, error) {
	v, ok := lookup(name)
	if !ok {
		return 0, fmt.Errorf("eval: shard \"auto\": %s is not set; the scheduler sets it in every array task (is this running inside one?)", name)
	}
	x, err := strconv.Atoi(strings.TrimSpace(v))
	if err != nil || x < 0 {
		return 0, fmt.Errorf("eval: shard \"auto\": %s=%q; want a whole number ≥ 0", name, v)
	}
	return x, nil
}

// ShardRange is the contiguous block [lo, hi) of total items that shard i
// of n covers: lo = ⌊i·total/n⌋, hi = ⌊(i+1)·total/n⌋, so the n blocks tile
// the items in order and differ in size by at most one.
func ShardRange(i, n, total int) (lo, hi int) {
	return i * total / n, (i + 1) * total / n
}

// ShardSuffix is the file-name suffix of shard i of n: "-iiiii-of-nnnnn".
func ShardSuffix(i, n int) string { return fmt.Sprintf("-%05d-of-%05d", i, n) }

// WriteArrays writes dir/<kind><suffix>.npy (len(labels)×cols float32, rows
// in flat) and dir/labels<suffix>.npy (int32), each atomically.
func WriteArrays(dir, kind, suffix string, flat []float32, cols int, labels []int) error {
	if err := safefile.Write(filepath.Join(dir, kind+suffix+".npy"), func(w io.Writer) error {
		return datasets.WriteNPYFloat32(w, flat, len(labels), cols)
	}); err != nil {
		return fmt.Errorf("eval: %w", err)
	}
	if err := safefile.Write(filepath.Join(dir, "labels"+suffix+".npy"), func(w io.Writer) error {
		return datasets.WriteNPYInt32(w, labels, len(labels))
	}); err != nil {
		return fmt.Errorf("eval: %w", err)
	}
	return nil
}

// WritePredictions writes probs (N×K) and labels as dir/predictions<suffix>.npy
// and dir/labels<suffix>.npy.
func WritePredictions(dir, suffix string, probs [][]float32, labels []int) error {
	k := 0
	if len(probs) > 0 {
		k = len(probs[0])
	}
	return WriteArrays(dir, "predictions", suffix, Flatten(probs), k, labels)
}

// Flatten concatenates rows into one slice, row after row.
func Flatten(rows [][]float32) []float32 {
	n := 0
	for _, r := range rows {
		n += len(r)
	}
	flat := make([]float32, 0, n)
	for _, r := range rows {
		flat = append(flat, r...)
	}
	return flat
}

// WriteShard writes one shard's arrays and its description
// dir/<kind>-shard<suffix>.json, m.Kind naming the arrays.
func WriteShard(dir string, m ShardMeta, flat []float32, labels []int) error {
	suffix := ShardSuffix(m.Shard, m.Shards)
	if err := WriteArrays(dir, m.Kind, suffix, flat, m.Cols, labels); err != nil {
		return err
	}
	return WriteShardMeta(filepath.Join(dir, m.Kind+"-shard"+suffix+".json"), m)
}

// WriteShardMeta writes m as indented JSON to path, atomically.
func WriteShardMeta(path string, m ShardMeta) error {
	b, err := json.MarshalIndent(m, "", "  ")
	if err != nil {
		return fmt.Errorf("eval: %w", err)
	}
	if err := safefile.WriteBytes(path, append(b, '\n')); err != nil {
		return fmt.Errorf("eval: %w", err)
	}
	return nil
}

// Merged is a complete set of shards joined in image order.
type Merged struct {
	// Meta describes the whole output: shard 0 of 1 covering every image.
	Meta   ShardMeta
	Shards int // how many shards were merged
	Flat   []float32
	Labels []int
}

// Rows returns the merged arrays as one slice per image (views into Flat).
func (m *Merged) Rows() [][]float32 {
	rows := make([][]float32, len(m.Labels))
	for r := range rows {
		rows[r] = m.Flat[r*m.Meta.Cols : (r+1)*m.Meta.Cols]
	}
	return rows
}

// MergeShards reads every <kind>-shard-*-of-*.json in dir, checks that they
// are the complete, consistent set of one run (same model file hash, data,
// size and shard count; every index once; the ranges ShardRange gives;
// arrays of the declared shapes) and returns the concatenated arrays in
// image order.
func MergeShards(dir, kind string) (*Merged, error) {
	paths, err := filepath.Glob(filepath.Join(dir, kind+"-shard-*-of-*.json"))
	if err != nil {
		return nil, fmt.Errorf("eval: %w", err)
	}
	if len(paths) == 0 {
		return nil, fmt.Errorf("eval: no %s shards (%s-shard-*-of-*.json) in %s; run with --shard i/n --out %s first", kind, kind, dir, dir)
	}
	var metas []ShardMeta
	for _, p := range paths {
		b, err := os.ReadFile(p)
		if err != nil {
			return nil, fmt.Errorf("eval: %w", err)
		}
		var m ShardMeta
		if err := json.Unmarshal(b, &m); err != nil {
			return nil, fmt.Errorf("eval: shard file %s: %v", p, err)
		}
		metas = append(metas, m)
	}
	slices.SortFunc(metas, func(a, b ShardMeta) int { return a.Shard - b.Shard })
	first := metas[0]
	if len(metas) != first.Shards {
		var have []string
		for _, m := range metas {
			have = append(have, strconv.Itoa(m.Shard))
		}
		return nil, fmt.Errorf("eval: %s: found %d of %d shards (have %s); run the missing ones before merging", dir, len(metas), first.Shards, strings.Join(have, ", "))
	}
	out := &Merged{Shards: len(metas)}
	for j, m := range metas {
		if m.Shard != j || m.Shards != first.Shards || m.Kind != kind || m.ModelSHA256 != first.ModelSHA256 || m.Data != first.Data ||
			m.Total != first.Total || m.Cols != first.Cols || !slices.Equal(m.Classes, first.Classes) {
			return nil, fmt.Errorf("eval: %s: shard %d of %d does not belong with shard 0 (different model file, data or shard count); put each run's shards in its own folder", dir, m.Shard, m.Shards)
		}
		if lo, hi := ShardRange(j, m.Shards, m.Total); m.Lo != lo || m.Hi != hi {
			return nil, fmt.Errorf("eval: %s: shard %d covers images %d-%d; want %d-%d", dir, j, m.Lo, m.Hi, lo, hi)
		}
		suffix := ShardSuffix(m.Shard, m.Shards)
		a, err := datasets.ReadNPYFile(filepath.Join(dir, kind+suffix+".npy"))
		if err != nil {
			return nil, fmt.Errorf("eval: %w", err)
		}
		l, err := datasets.ReadNPYFile(filepath.Join(dir, "labels"+suffix+".npy"))
		if err != nil {
			return nil, fmt.Errorf("eval: %w", err)
		}
		rows := m.Hi - m.Lo
		if a.Descr != datasets.NPYFloat32 || !slices.Equal(a.Shape, []int{rows, m.Cols}) || l.Descr != datasets.NPYInt32 || !slices.Equal(l.Shape, []int{rows}) {
			return nil, fmt.Errorf("eval: %s: shard %d arrays have shapes %v and %v; want [%d %d] float32 and [%d] int32", dir, j, a.Shape, l.Shape, rows, m.Cols, rows)
		}
		out.Flat = append(out.Flat, a.F32...)
		for _, v := range l.I32 {
			out.Labels = append(out.Labels, int(v))
		}
	}
	out.Meta = first
	out.Meta.Shard, out.Meta.Shards, out.Meta.Lo, out.Meta.Hi = 0, 1, 0, first.Total
	return out, nil
}

// FileSHA256 returns the hex SHA-256 of a file, identifying the exact model
// file a shard was computed with.
func FileSHA256(path string) (string, error) {
	f, err := os.Open(path)
	if err != nil {
		return "", fmt.Errorf("eval: %w", err)
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		return "", fmt.Errorf("eval: %w", err)
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}
