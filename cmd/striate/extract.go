package main

// NPY files (NumPy's format, version 1.0, as specified in numpy/lib/format.py
// and the NumPy Enhancement Proposal 1): the 6-byte magic "\x93NUMPY", the
// version bytes 1 and 0, a little-endian uint16 header length, then an ASCII
// Python dict literal
//
//	{'descr': '<f4', 'fortran_order': False, 'shape': (N, D), }
//
// padded with spaces and ended by '\n' so that the data starts at a multiple
// of 64 bytes, then the array in C (row-major) order, little-endian. NumPy
// (np.load), and most tools that read NumPy arrays, open these files
// directly. striate writes float32 ('<f4') features and probabilities and
// int32 ('<i4') labels.

import (
	"bufio"
	"encoding/binary"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
)

func init() {
	register(&command{
		name:    "extract",
		summary: "write a model's feature vectors for a data set to NPY files",
		usage:   "",
		example: `  striate extract --model fashion.stm --data fashion --out feats
      # feats/features.npy  float32 N×D   (np.load("feats/features.npy"))
      # feats/labels.npy    int32   N
      # feats/extract.json  what was extracted, from which model and data

  # split across 8 machines (job-array index 0..7), then merge:
  striate extract --model m.stm --data mnist:train --out feats --shard 5/8
  striate extract --merge --out feats       # byte-identical to the unsharded files`,
		setup: func(fs *flag.FlagSet, g *globals) func([]string) error {
			var o extractOptions
			fs.StringVar(&o.model, "model", "", "model `file` written by striate train")
			fs.StringVar(&o.data, "data", "", dataFlagHelp)
			fs.StringVar(&o.shard, "shard", "", "extract only shard `i/n` (i = 0..n-1)")
			fs.BoolVar(&o.merge, "merge", false, "merge the shards found in --out into features.npy and labels.npy")
			fs.IntVar(&o.batch, "batch", 512, "images per extraction batch")
			g.addWorkers(fs)
			g.addQuiet(fs)
			g.addOut(fs, "features")
			return func(args []string) error {
				if len(args) > 0 {
					return usagef("unexpected argument %q (extract takes flags only)", args[0])
				}
				return runExtract(g, o)
			}
		},
	})
}

type extractOptions struct {
	model, data, shard string
	merge              bool
	batch              int
}

func runExtract(g *globals, o extractOptions) error {
	if o.merge {
		if o.model != "" || o.data != "" || o.shard != "" {
			return usagef("--merge reads everything from the shards in --out; drop --model, --data and --shard")
		}
		metas, feats, labels, err := mergeShards(g.out, "features")
		if err != nil {
			return err
		}
		if err := writeArrays(g.out, "features", "", feats, metas[0].Cols, labels); err != nil {
			return err
		}
		meta := metas[0]
		meta.Shard, meta.Shards, meta.Lo, meta.Hi = 0, 1, 0, meta.Total
		if err := writeMetaFile(filepath.Join(g.out, "extract.json"), meta); err != nil {
			return err
		}
		fmt.Fprintf(g.stdout, "merged %d shards: %d×%d features into %s\n", len(metas), len(labels), meta.Cols, filepath.Join(g.out, "features.npy"))
		return nil
	}
	if o.batch < 1 {
		return usagef("--batch %d; want at least 1", o.batch)
	}
	m, err := loadModel(o.model)
	if err != nil {
		return err
	}
	h, w := m.InputSize()
	set, err := loadSpec(o.data, h, w, g.stderr)
	if err != nil {
		return err
	}
	i, n := 0, 1
	if o.shard != "" {
		if i, n, err = parseShard(o.shard); err != nil {
			return err
		}
	}
	lo, hi := shardRange(i, n, set.N)
	d := m.FeatureLen()
	feats := make([]float32, 0, (hi-lo)*d)
	bar := progressFor(g, hi-lo, "extract")
	buf := make([]float32, o.batch*h*w)
	imgs := make([][]float32, 0, o.batch)
	for b := lo; b < hi; b += o.batch {
		e := min(b+o.batch, hi)
		imgs = imgs[:0]
		for j := b; j < e; j++ {
			k := j - b
			imgs = append(imgs, set.Float(buf[k*h*w:(k+1)*h*w], j))
		}
		rows, err := m.ExtractFloats(imgs, h, w, g.workers)
		if err != nil {
			bar.Done()
			return err
		}
		for _, r := range rows {
			feats = append(feats, r...)
		}
		bar.Step(e-lo, hi-lo, "extract")
	}
	bar.Done()
	sum, err := fileSHA256(o.model)
	if err != nil {
		return err
	}
	if err := os.MkdirAll(g.out, 0o755); err != nil {
		return err
	}
	meta := shardMeta{Kind: "features", Model: o.model, ModelSHA256: sum, Data: set.Name, DataSpec: o.data,
		Total: set.N, Shard: i, Shards: n, Lo: lo, Hi: hi, Cols: d, Classes: set.Classes}
	suffix := ""
	if o.shard != "" {
		suffix = shardSuffix(i, n)
	}
	if err := writeArrays(g.out, "features", suffix, feats, d, set.Labels[lo:hi]); err != nil {
		return err
	}
	if o.shard != "" {
		err = writeShardMeta(g.out, meta)
	} else {
		err = writeMetaFile(filepath.Join(g.out, "extract.json"), meta)
	}
	if err != nil {
		return err
	}
	fmt.Fprintf(g.stdout, "%d×%d features of %s (images %d to %d) written to %s\n", hi-lo, d, set.Name, lo, hi-1, g.out)
	return nil
}

// writeArrays writes <kind><suffix>.npy (rows×cols float32) and
// labels<suffix>.npy.
func writeArrays(dir, kind, suffix string, flat []float32, cols int, labels []int) error {
	if err := writeFileAtomic(filepath.Join(dir, kind+suffix+".npy"), func(w io.Writer) error {
		return writeNPYFloat32(w, flat, len(labels), cols)
	}); err != nil {
		return err
	}
	return writeFileAtomic(filepath.Join(dir, "labels"+suffix+".npy"), func(w io.Writer) error {
		return writeNPYInt32(w, labels)
	})
}

// shardMeta describes one shard's output (or, with Shards = 1, a whole
// unsharded output). It is written as <kind>-shard-i-of-n.json beside the
// arrays.
type shardMeta struct {
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

func shardSuffix(i, n int) string { return fmt.Sprintf("-%05d-of-%05d", i, n) }

func writeShardMeta(dir string, m shardMeta) error {
	return writeMetaFile(filepath.Join(dir, m.Kind+"-shard"+shardSuffix(m.Shard, m.Shards)+".json"), m)
}

func writeMetaFile(path string, m shardMeta) error {
	b, err := json.MarshalIndent(m, "", "  ")
	if err != nil {
		return err
	}
	return writeFileAtomic(path, func(w io.Writer) error { _, err := w.Write(append(b, '\n')); return err })
}

// mergeShards reads every <kind>-shard-*.json in dir, checks that they are
// the complete, consistent set of one run (same model file hash, data and
// shard count, every index once, contiguous ranges), and returns the
// concatenated arrays in image order.
func mergeShards(dir, kind string) ([]shardMeta, []float32, []int, error) {
	paths, err := filepath.Glob(filepath.Join(dir, kind+"-shard-*-of-*.json"))
	if err != nil {
		return nil, nil, nil, err
	}
	if len(paths) == 0 {
		return nil, nil, nil, fmt.Errorf("no %s shards (%s-shard-*-of-*.json) in %s; run with --shard i/n --out %s first", kind, kind, dir, dir)
	}
	var metas []shardMeta
	for _, p := range paths {
		b, err := os.ReadFile(p)
		if err != nil {
			return nil, nil, nil, err
		}
		var m shardMeta
		if err := json.Unmarshal(b, &m); err != nil {
			return nil, nil, nil, fmt.Errorf("shard file %s: %v", p, err)
		}
		metas = append(metas, m)
	}
	slices.SortFunc(metas, func(a, b shardMeta) int { return a.Shard - b.Shard })
	first := metas[0]
	if len(metas) != first.Shards {
		var have []string
		for _, m := range metas {
			have = append(have, strconv.Itoa(m.Shard))
		}
		return nil, nil, nil, fmt.Errorf("%s: found %d of %d shards (have %s); run the missing ones before merging", dir, len(metas), first.Shards, strings.Join(have, ", "))
	}
	var flat []float32
	var labels []int
	for j, m := range metas {
		if m.Shard != j || m.Shards != first.Shards || m.ModelSHA256 != first.ModelSHA256 || m.Data != first.Data ||
			m.Total != first.Total || m.Cols != first.Cols || !slices.Equal(m.Classes, first.Classes) {
			return nil, nil, nil, fmt.Errorf("%s: shard %d of %d does not belong with shard 0 (different model file, data or shard count); put each run's shards in its own folder", dir, m.Shard, m.Shards)
		}
		if lo, hi := shardRange(j, m.Shards, m.Total); m.Lo != lo || m.Hi != hi {
			return nil, nil, nil, fmt.Errorf("%s: shard %d covers images %d-%d; want %d-%d", dir, j, m.Lo, m.Hi, lo, hi)
		}
		suffix := shardSuffix(m.Shard, m.Shards)
		a, err := readNPY(filepath.Join(dir, kind+suffix+".npy"))
		if err != nil {
			return nil, nil, nil, err
		}
		l, err := readNPY(filepath.Join(dir, "labels"+suffix+".npy"))
		if err != nil {
			return nil, nil, nil, err
		}
		rows := m.Hi - m.Lo
		if a.Descr != "<f4" || !slices.Equal(a.Shape, []int{rows, m.Cols}) || l.Descr != "<i4" || !slices.Equal(l.Shape, []int{rows}) {
			return nil, nil, nil, fmt.Errorf("%s: shard %d arrays have shapes %v and %v; want [%d %d] and [%d]", dir, j, a.Shape, l.Shape, rows, m.Cols, rows)
		}
		flat = append(flat, a.F32...)
		for _, v := range l.I32 {
			labels = append(labels, int(v))
		}
	}
	return metas, flat, labels, nil
}

const (
	npyMagic = "\x93NUMPY"
	npyAlign = 64 // NumPy ≥ 1.14 aligns the data to 64 bytes
	// npyMaxHeader bounds the header a reader accepts: a v1.0 header length
	// is a uint16, and striate's own headers are under 128 bytes.
	npyMaxHeader = 4096
	// npyMaxElems bounds what a reader allocates (2³⁰ elements = 4 GiB of
	// float32), so a hostile shape cannot ask for more; it also fits the int
	// of 32-bit boards.
	npyMaxElems = 1 << 30
)

// npyHeader returns the complete header block (magic through '\n') for an
// array of the given dtype descr and shape.
func npyHeader(descr string, shape []int) []byte {
	dims := make([]string, len(shape))
	for i, d := range shape {
		dims[i] = strconv.Itoa(d)
	}
	sh := strings.Join(dims, ", ")
	if len(shape) == 1 {
		sh += ","
	}
	dict := fmt.Sprintf("{'descr': '%s', 'fortran_order': False, 'shape': (%s), }", descr, sh)
	total := len(npyMagic) + 2 + 2 + len(dict) + 1
	pad := (npyAlign - total%npyAlign) % npyAlign
	h := make([]byte, 0, total+pad)
	h = append(h, npyMagic...)
	h = append(h, 1, 0)
	h = binary.LittleEndian.AppendUint16(h, uint16(len(dict)+pad+1))
	h = append(h, dict...)
	for range pad {
		h = append(h, ' ')
	}
	return append(h, '\n')
}

// writeNPYFloat32 writes a rows×cols float32 array (row-major in data) to w.
func writeNPYFloat32(w io.Writer, data []float32, shape ...int) error {
	if n := shapeLen(shape); n != len(data) {
		return fmt.Errorf("npy: shape %v holds %d values, data has %d", shape, n, len(data))
	}
	bw := bufio.NewWriter(w)
	bw.Write(npyHeader("<f4", shape))
	var b [4]byte
	for _, v := range data {
		binary.LittleEndian.PutUint32(b[:], math.Float32bits(v))
		bw.Write(b[:])
	}
	return bw.Flush()
}

// writeNPYInt32 writes a 1-D int32 array.
func writeNPYInt32(w io.Writer, data []int) error {
	bw := bufio.NewWriter(w)
	bw.Write(npyHeader("<i4", []int{len(data)}))
	var b [4]byte
	for _, v := range data {
		if v < math.MinInt32 || v > math.MaxInt32 {
			return fmt.Errorf("npy: value %d does not fit int32", v)
		}
		binary.LittleEndian.PutUint32(b[:], uint32(int32(v)))
		bw.Write(b[:])
	}
	return bw.Flush()
}

func shapeLen(shape []int) int {
	n := 1
	for _, d := range shape {
		n *= d
	}
	return n
}

// npyArray is an array read back from an NPY file: float32 data or int32
// data depending on Descr.
type npyArray struct {
	Descr string
	Shape []int
	F32   []float32
	I32   []int32
}

// npyError reports a malformed NPY file.
type npyError struct {
	File   string
	Offset int64
	Msg    string
}

func (e *npyError) Error() string {
	return fmt.Sprintf("npy: %s at byte %d: %s", e.File, e.Offset, e.Msg)
}

// readNPY reads an NPY v1.0 file written in striate's subset of the format
// ('<f4' or '<i4', C order). It checks the header and the data size against
// the shape before allocating.
func readNPY(path string) (*npyArray, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return nil, err
	}
	bad := func(off int64, format string, a ...any) error {
		return &npyError{path, off, fmt.Sprintf(format, a...)}
	}
	r := bufio.NewReader(f)
	var pre [10]byte
	if _, err := io.ReadFull(r, pre[:]); err != nil {
		return nil, bad(0, "file too short for an NPY header (%d bytes)", st.Size())
	}
	if string(pre[:6]) != npyMagic {
		return nil, bad(0, "magic %q; want \\x93NUMPY (is this an NPY file?)", pre[:6])
	}
	if pre[6] != 1 || pre[7] != 0 {
		return nil, bad(6, "format version %d.%d; striate reads version 1.0", pre[6], pre[7])
	}
	hl := int(binary.LittleEndian.Uint16(pre[8:]))
	if hl > npyMaxHeader || int64(10+hl) > st.Size() {
		return nil, bad(8, "header length %d exceeds the file or the %d-byte limit", hl, npyMaxHeader)
	}
	hb := make([]byte, hl)
	if _, err := io.ReadFull(r, hb); err != nil {
		return nil, bad(10, "truncated header")
	}
	h := strings.TrimRight(string(hb), " \n")
	a := &npyArray{}
	for _, field := range []string{"descr", "fortran_order", "shape"} {
		if !strings.Contains(h, "'"+field+"':") {
			return nil, bad(10, "header %q lacks %q", h, field)
		}
	}
	switch {
	case strings.Contains(h, "'descr': '<f4'"):
		a.Descr = "<f4"
	case strings.Contains(h, "'descr': '<i4'"):
		a.Descr = "<i4"
	default:
		return nil, bad(10, "header %q: dtype not supported; want '<f4' or '<i4'", h)
	}
	if !strings.Contains(h, "'fortran_order': False") {
		return nil, bad(10, "header %q: Fortran order not supported", h)
	}
	i := strings.Index(h, "'shape': (")
	if i < 0 {
		return nil, bad(10, "header %q: malformed shape", h)
	}
	j := strings.Index(h[i:], ")")
	if j < 0 {
		return nil, bad(10, "header %q: malformed shape", h)
	}
	n := 1
	for _, d := range strings.Split(h[i+len("'shape': ("):i+j], ",") {
		d = strings.TrimSpace(d)
		if d == "" {
			continue
		}
		v, err := strconv.Atoi(d)
		if err != nil || v < 0 || v > npyMaxElems {
			return nil, bad(10, "header %q: bad dimension %q", h, d)
		}
		a.Shape = append(a.Shape, v)
		n *= v
		if n > npyMaxElems {
			return nil, bad(10, "array of more than %d elements", int64(npyMaxElems))
		}
	}
	if want := int64(10+hl) + 4*int64(n); st.Size() != want {
		return nil, bad(int64(10+hl), "file holds %d bytes; shape %v needs %d", st.Size(), a.Shape, want)
	}
	raw := make([]byte, 4*n)
	if _, err := io.ReadFull(r, raw); err != nil {
		return nil, bad(int64(10+hl), "truncated data: %v", err)
	}
	if a.Descr == "<f4" {
		a.F32 = make([]float32, n)
		for k := range a.F32 {
			a.F32[k] = math.Float32frombits(binary.LittleEndian.Uint32(raw[4*k:]))
		}
	} else {
		a.I32 = make([]int32, n)
		for k := range a.I32 {
			a.I32[k] = int32(binary.LittleEndian.Uint32(raw[4*k:]))
		}
	}
	return a, nil
}

// writeFileAtomic writes through fill into a temporary file beside path and
// renames it into place, so a killed job never leaves a half-written shard
// that looks complete.
func writeFileAtomic(path string, fill func(io.Writer) error) (err error) {
	tmp, err := os.CreateTemp(dirOf(path), ".tmp-*")
	if err != nil {
		return err
	}
	defer func() {
		if err != nil {
			tmp.Close()
			os.Remove(tmp.Name())
		}
	}()
	if err = fill(tmp); err != nil {
		return err
	}
	if err = tmp.Close(); err != nil {
		return err
	}
	return os.Rename(tmp.Name(), path)
}

func dirOf(path string) string {
	if i := strings.LastIndexAny(path, `/\`); i >= 0 {
		return path[:i+1]
	}
	return "."
}
