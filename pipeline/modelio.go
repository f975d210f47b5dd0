package pipeline

import (
	"bufio"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"strings"

	"github.com/striate/striate/internal/safefile"
	"github.com/striate/striate/learn"
	"github.com/striate/striate/v1layer"
)

// Tensor names in a model file:
//
//	front.bank.NNNN  [size size]  kernel NNNN of a learned bank (Front.Bank); its
//	                              metadata stays in the header's config
//	templates.L.*                 template layer L (see learn.Templates.Tensors)
//	guard.keep  int32 [k]         indices of the features the guard keeps
//	guard.lo, guard.hi [k]        their clip bounds (Guard.Clip "range")
//	head.*                        the head (see learn.Head.Tensors)
const (
	bankTensorPrefix = "front.bank."
	tmplTensorPrefix = "templates."
	headTensorPrefix = "head."
)

// Save writes the model in striate's model-file format (see modelfile.go):
// the configuration and class names in the JSON header, the learned arrays
// as little-endian float32 tensors, a SHA-256 at the end. An int8 model
// (Quantize) stores its integer section instead of the float template and
// head tensors, as format version 3. A model with a scan section (WithScan)
// is written as format version 4, float or int8, so that a reader of
// versions 1..3 refuses it as written by a newer striate; one without keeps
// version 2 or 3. Equal models give bit-identical files.
func (m *Model) Save(w io.Writer) error {
	cfg := m.plan.Config()
	var ts []tensor
	if b := cfg.Front.Bank; b != nil {
		nb := &v1layer.Bank{Kernels: make([]v1layer.Kernel, len(b.Kernels))}
		for i, k := range b.Kernels {
			ts = append(ts, tensor{Name: fmt.Sprintf("%s%04d", bankTensorPrefix, i), DType: Float32, Shape: []int{k.Size, k.Size}, F: k.W})
			k.W = nil
			nb.Kernels[i] = k
		}
		cfg.Front.Bank = nb
	}
	if m.q != nil {
		return m.saveInt8(w, cfg, ts)
	}
	if m.tmpl != nil {
		for _, t := range m.tmpl.tensors() {
			ts = append(ts, tensor{Name: t.Name, DType: Float32, Shape: t.Shape, F: t.Data})
		}
	}
	ts = append(ts, m.guard.tensors()...)
	for _, t := range m.head.Tensors() {
		ts = append(ts, tensor{Name: t.Name, DType: Float32, Shape: t.Shape, F: t.Data})
	}
	cj, err := json.Marshal(cfg)
	if err != nil {
		return fmt.Errorf("pipeline: encoding the config: %v", err)
	}
	scan, err := m.scanSection()
	if err != nil {
		return err
	}
	return encodeFile(w, &fileContents{Config: cj, Classes: m.classes, Tensors: ts, Scan: scan})
}

// SaveFile writes the model to path atomically: to a temporary file in
// the same folder, synced, then renamed over path, so an interrupted or
// failed save leaves the previous file intact (or no file), never a partial
// model.
func (m *Model) SaveFile(path string) error {
	if err := safefile.Write(path, m.Save); err != nil {
		return fmt.Errorf("pipeline: %w", err)
	}
	return nil
}

// Load reads a model written by Save. It checks the file before building
// anything (magic, format version, sizes against hard limits and the file
// length, checksum, every value finite) and never executes anything it
// reads. It reads the file in one pass: the magic, version and header come
// first from a bounded prefix, the configuration in the header is checked
// against the work-size limit (DefaultMaxWorkBytes; see Plan.PredictWork)
// before the payload is read, and the payload is streamed through the
// checksum. A bad file gives a *FileError (errors.Is it against
// ErrNotModelFile, ErrUnsupportedVersion, ErrTruncated, ErrChecksum,
// ErrLimit or ErrMalformed) that says what is wrong; a model over the
// work-size limit gives ErrLimit with a *WorkSizeError's message.
func Load(r io.Reader) (*Model, error) { return load(r, -1, Limits{}, nil) }

// LoadLimits is Load with the work-size limit of lim.
func LoadLimits(r io.Reader, lim Limits) (*Model, error) { return load(r, -1, lim, nil) }

// LoadFile is Load on the named file; errors name the file.
func LoadFile(path string) (*Model, error) { return LoadFileLimits(path, Limits{}) }

// LoadFileLimits is LoadLimits on the named file; errors name the file.
// The file's length is checked against its header before the payload is
// read.
func LoadFileLimits(path string, lim Limits) (*Model, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("pipeline: %w", err)
	}
	defer f.Close()
	m, err := load(bufio.NewReaderSize(f, 1<<16), fileSize(f), lim, nil)
	if err != nil {
		return nil, fmt.Errorf("%w (in %s)", err, path)
	}
	return m, nil
}

// fileSize is f's length when f is a regular file, else -1 (a pipe, a
// device: /dev/zero has no length to trust).
func fileSize(f *os.File) int64 {
	st, err := f.Stat()
	if err != nil || !st.Mode().IsRegular() {
		return -1
	}
	return st.Size()
}

func load(r io.Reader, size int64, lim Limits, info *FileInfo) (*Model, error) {
	c, err := decodeStream(r, size, func(h *fileHeader, ver uint32) error { return headerWork(h, ver, lim) }, info)
	if err != nil {
		return nil, err
	}
	m, err := buildModel(c, lim)
	if err != nil {
		return nil, err
	}
	return attachScan(m, c)
}

// headerWork checks the work size of the configuration in a model file's
// header before its payload is read. A configuration that does not decode
// or plan is left for buildModel to report once the checksum holds.
func headerWork(h *fileHeader, ver uint32, lim Limits) error {
	cfg, err := headerConfig(h.Config, ver)
	if err != nil {
		return nil
	}
	if bk := cfg.Front.Bank; bk != nil {
		// Stand-in weights of the declared sizes; the tensors are checked later.
		if len(bk.Kernels) > MaxTensors {
			return nil
		}
		for i := range bk.Kernels {
			k := &bk.Kernels[i]
			if k.Size < 1 || k.Size > maxBankKernel || len(k.W) != 0 {
				return nil
			}
			k.W = make([]float32, k.Size*k.Size)
		}
	}
	p, err := newPlan(cfg)
	if err != nil {
		return nil
	}
	if err := planWork(p, lim); err != nil {
		return err
	}
	var data int64
	for _, t := range h.Tensors {
		data += t.Length
	}
	if most := p.tensorBytesBound(cfg, len(h.Classes)); data > most {
		return fileErr(ErrMalformed, -1, "header.tensors", "%d bytes of tensors; the configuration's stages hold at most %d (learned bank, template layers, guard, head)", data, most)
	}
	return nil
}

// tensorBytesBound is the most bytes of tensors a model of the plan's
// configuration with the given number of classes holds: the learned bank's
// kernels, each template layer's mean, whitening matrix, templates and
// scalars, the guard's three vectors and the head's standardisation and
// weights (both kinds allowed for). A file declaring more is refused before
// its payload is read.
func (p *Plan) tensorBytesBound(cfg Config, classes int) int64 {
	var n int64
	if b := cfg.Front.Bank; b != nil {
		for _, k := range b.Kernels {
			n += int64(k.Size) * int64(k.Size)
		}
	}
	ls, err := p.layers()
	if err != nil {
		return MaxFileBytes // the full check reports it
	}
	for i, l := range ls {
		pp := int64(p.cfg.Templates[i].PatchSize)
		dim := int64(l.c) * pp * pp
		n += dim + dim*dim + int64(p.cfg.Templates[i].K)*dim + 2
	}
	d := p.featLenBound(ls)
	hidden := max(int64(p.cfg.Head.Hidden), int64(DefaultHead.Hidden))
	k := int64(classes)
	n += 3*d + 2*d + (d+1)*hidden + (hidden+1)*k + (d+1)*k
	return 4 * n
}

// maxBankKernel bounds the kernel side headerWork builds a stand-in for; a
// larger one is left to the full check (v1layer refuses it).
const maxBankKernel = 256

// planWork checks a loaded model's plan: one prediction's work size.
func planWork(p *Plan, lim Limits) error {
	w, err := p.PredictWork()
	if err == nil {
		err = w.check(lim)
	}
	if err != nil {
		return fileErr(ErrLimit, -1, "header.config", "%s", strings.TrimPrefix(err.Error(), "pipeline: "))
	}
	return nil
}

func headerConfig(raw json.RawMessage, ver uint32) (Config, error) {
	var cfg Config
	if err := decodeStrict(raw, &cfg, "model config"); err != nil {
		return cfg, err
	}
	if ver == 1 {
		configFromV1(&cfg)
	}
	return cfg, nil
}

func malformed(field, format string, a ...any) error {
	return fileErr(ErrMalformed, -1, field, format, a...)
}

func buildModel(c *fileContents, lim Limits) (*Model, error) {
	cfg, err := headerConfig(c.Config, c.Version)
	if err != nil {
		return nil, malformed("header.config", "%v", err)
	}
	used := make(map[string]bool, len(c.Tensors))
	if bk := cfg.Front.Bank; bk != nil {
		if len(bk.Kernels) > MaxTensors {
			return nil, malformed("header.config.front.bank", "%d kernels; want at most %d", len(bk.Kernels), MaxTensors)
		}
		for i := range bk.Kernels {
			k := &bk.Kernels[i]
			name := fmt.Sprintf("%s%04d", bankTensorPrefix, i)
			t := c.tensor(name)
			if t == nil || t.DType != Float32 {
				return nil, malformed("tensor "+name, "missing (the config's bank has %d kernels, each stored as a float32 tensor)", len(bk.Kernels))
			}
			if len(t.Shape) != 2 || t.Shape[0] != k.Size || t.Shape[1] != k.Size {
				return nil, malformed("tensor "+name, "shape %v; the bank's kernel %d has size %d, so want [%d %d]", t.Shape, i, k.Size, k.Size, k.Size)
			}
			if len(k.W) != 0 {
				return nil, malformed("header.config.front.bank", "kernel %d holds weights in the header; they belong in tensor %s", i, name)
			}
			k.W = t.F
			used[name] = true
		}
	}
	p, err := newPlan(cfg)
	if err != nil {
		return nil, malformed("header.config", "%v", err)
	}
	if err := planWork(p, lim); err != nil {
		return nil, err
	}
	if len(c.Classes) < 2 {
		return nil, malformed("header.classes", "%d classes; a model has at least 2", len(c.Classes))
	}
	if c.Version == FormatVersionInt8 || (c.Version == FormatVersionScan && c.hasInt8()) {
		return loadInt8(p, c, used)
	}
	for _, name := range []string{"guard.keep", "guard.lo", "guard.hi"} {
		if c.tensor(name) != nil {
			used[name] = true
		}
	}
	var headTs, tmplTs []learn.NamedTensor
	for _, t := range c.Tensors {
		nt := learn.NamedTensor{Name: t.Name, Shape: t.Shape, Data: t.F}
		switch {
		case used[t.Name]:
		case t.DType != Float32:
			return nil, malformed("tensor "+t.Name, "dtype %s; a version-%d file stores float32 only (int8 tensors need version %d)", t.DType, c.Version, FormatVersionInt8)
		case strings.HasPrefix(t.Name, headTensorPrefix):
			headTs = append(headTs, nt)
		case strings.HasPrefix(t.Name, tmplTensorPrefix):
			tmplTs = append(tmplTs, nt)
		default:
			return nil, malformed("tensor "+t.Name, "unknown tensor name; want %s*, %s* or %s*", bankTensorPrefix, tmplTensorPrefix, headTensorPrefix)
		}
	}
	tmpl, err := loadTemplates(p, tmplTs)
	if err != nil {
		return nil, malformed("templates", "%v", err)
	}
	if p.bankPending {
		return nil, malformed("header.config.learn_bank", "set, but the config holds no learned bank (front.bank)")
	}
	g, err := loadGuard(p.cfg.Guard, p.featureLen(tmpl), c.tensor("guard.keep"), c.tensor("guard.lo"), c.tensor("guard.hi"))
	if err != nil {
		return nil, malformed("guard", "%v", err)
	}
	head, err := learn.NewHeadFromTensors(headTs)
	if err != nil {
		return nil, malformed("head", "%v", err)
	}
	m, err := newModel(p, c.Classes, tmpl, g, head)
	if err != nil {
		return nil, malformed("", "%v", err)
	}
	return m, nil
}

// configFromV1 rewrites the configuration of a format-version-1 model file
// so that it reads the same under version 2's field-by-field defaults:
//
//   - a head given in part took learn's defaults for its other zero fields
//     (kind softmax, hidden 256, epochs 30, schedule constant, val_frac 0.1),
//     where version 2 takes DefaultHead's; a zero head meant DefaultHead in
//     both;
//   - an absent pool.keep meant false, where version 2 reads true;
//   - the run-time fields of learn's dictionary configurations (workers,
//     checkpoint_every), which never changed a model, are cleared, as
//     version 2 rejects them.
func configFromV1(c *Config) {
	if h := &c.Head; *h != (learn.HeadConfig{}) {
		orDefault(&h.Kind, learn.KindSoftmax)
		if h.Kind == learn.KindMLP {
			orDefault(&h.Hidden, learnDefaultHidden)
		}
		orDefault(&h.Epochs, learnDefaultEpochs)
		orDefault(&h.Schedule, learn.ScheduleConstant)
		orDefault(&h.ValFrac, learnDefaultValFrac)
	}
	if c.Pool.Keep == nil {
		c.Pool.Keep = new(false)
	}
	clearRun := func(d *learn.DictConfig) {
		d.Workers, d.Coder.Workers, d.CheckpointEvery = 0, 0, 0
	}
	for i := range c.Templates {
		if sp := c.Templates[i].Sparse; sp != nil {
			cp := *sp
			clearRun(&cp)
			c.Templates[i].Sparse = &cp
		}
	}
	if lb := c.LearnBank; lb != nil {
		clearRun(&lb.Dict)
		lb.Bank.Workers = 0
	}
}
