package pipeline

import (
	"bytes"
	"encoding/binary"
	"encoding/json"
	"errors"
	"math"
	"os"
	"runtime"
	"strings"
	"sync"
	"testing"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/learn"
)

// int8AccTol is the largest accuracy loss allowed from the float model to
// its int8 form: the target of post-training 8-bit quantisation, which
// Jacob et al. 2018 (Table 4.1 and §4) report within a fraction of a point
// for networks that quantise well.
const int8AccTol = 0.002

// int8SizeRatio is the largest int8-to-float file size ratio: int8
// weights are a quarter of float32 ones, so the file sits near 25% when
// the head and templates dominate it, plus the float front end's and the
// guard's tensors.
const int8SizeRatio = 0.30

// quantFixture is a small fitted model (one template layer, an MLP head)
// on MNIST with its int8 form, shared by the tests below.
var quantFixture struct {
	once     sync.Once
	fm, qm   *Model
	fb, qb   []byte
	test     *datasets.Set
	err      error
	train    *datasets.Set
	calibOpt QuantizeOptions
}

func quantModels(t *testing.T) (fm, qm *Model, fb, qb []byte, test *datasets.Set) {
	t.Helper()
	train, tst := mnist(t)
	f := &quantFixture
	f.once.Do(func() {
		cfg := Config{
			Templates:    []learn.TemplateConfig{{K: 32, PatchSize: 5, Patches: 8000, Iters: 5}},
			Head:         learn.HeadConfig{Kind: learn.KindMLP, Hidden: 128, Epochs: 4},
			HeadMinSteps: -1,
			Unlabeled:    2000,
			Seed:         3,
		}
		f.train, f.test = train, tst.First(2000)
		f.calibOpt = QuantizeOptions{Images: 1000, Workers: 2}
		if f.fm, f.err = Fit(cfg, train.First(4000), FitOptions{Workers: 2}); f.err != nil {
			return
		}
		if f.qm, f.err = f.fm.Quantize(train, f.calibOpt); f.err != nil {
			return
		}
		var a, b bytes.Buffer
		if f.err = f.fm.Save(&a); f.err != nil {
			return
		}
		f.err = f.qm.Save(&b)
		f.fb, f.qb = a.Bytes(), b.Bytes()
	})
	if f.err != nil {
		t.Fatal(f.err)
	}
	return f.fm, f.qm, f.fb, f.qb, f.test
}

// TestInt8AccuracySizeAndDeterminism: on 2,000 MNIST test digits the int8
// model is within int8AccTol of the float model it came from, its file is
// at most int8SizeRatio of the float file's size and of format version 3,
// a loaded copy predicts bit-identically, and quantising again gives a
// bit-identical file.
func TestInt8AccuracySizeAndDeterminism(t *testing.T) {
	fm, qm, fb, qb, test := quantModels(t)
	if !qm.Int8() || fm.Int8() || qm.Head() != nil {
		t.Fatalf("Int8: float %v, quantised %v; quantised Head %v (want nil)", fm.Int8(), qm.Int8(), qm.Head())
	}
	af, err := Accuracy(fm, test, nil, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	aq, err := Accuracy(qm, test, nil, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	ratio := float64(len(qb)) / float64(len(fb))
	t.Logf("accuracy float %.2f%%, int8 %.2f%% (Δ %+.2f pt); file %d → %d bytes (%.1f%%)", 100*af, 100*aq, 100*(aq-af), len(fb), len(qb), 100*ratio)
	if math.Abs(aq-af) > int8AccTol {
		t.Errorf("int8 accuracy %.2f%% differs by more than %.1f pt from the float model's %.2f%%", 100*aq, 100*int8AccTol, 100*af)
	}
	if ratio > int8SizeRatio {
		t.Errorf("int8 file is %.1f%% of the float file; want ≤ %.0f%%", 100*ratio, 100*int8SizeRatio)
	}
	if v := binary.LittleEndian.Uint32(qb[8:]); v != FormatVersionInt8 {
		t.Errorf("int8 file has version %d; want %d", v, FormatVersionInt8)
	}
	if v := binary.LittleEndian.Uint32(fb[8:]); v != FormatVersion {
		t.Errorf("float file has version %d; want %d (older readers still read it)", v, FormatVersion)
	}
	lm, err := Load(bytes.NewReader(qb))
	if err != nil {
		t.Fatal(err)
	}
	imgs := make([][]float32, 200)
	for i := range imgs {
		imgs[i] = test.Float(nil, i)
	}
	p1, _ := qm.PredictBatch(imgs, 28, 28, 2)
	p2, _ := lm.PredictBatch(imgs, 28, 28, 1)
	for i := range p1 {
		for c := range p1[i] {
			if math.Float32bits(p1[i][c]) != math.Float32bits(p2[i][c]) {
				t.Fatalf("image %d class %d: %g before saving, %g after loading", i, c, p1[i][c], p2[i][c])
			}
		}
	}
	var again bytes.Buffer
	q2, err := fm.Quantize(quantFixture.train, quantFixture.calibOpt)
	if err != nil {
		t.Fatal(err)
	}
	if err := q2.Save(&again); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(again.Bytes(), qb) {
		t.Error("quantising the same model on the same images twice gave different files")
	}
	var resaved bytes.Buffer
	if err := lm.Save(&resaved); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(resaved.Bytes(), qb) {
		t.Error("a loaded int8 model saves to a different file")
	}
	// Extract gives the dequantised features, close to the float ones.
	ef, eq := fm.Extract(setImage(test, 0)), qm.Extract(setImage(test, 0))
	if len(ef) != len(eq) {
		t.Fatalf("Extract: %d float features, %d int8", len(ef), len(eq))
	}
}

// editInt8 decodes the int8 file b, applies f to its contents and encodes
// it again (a valid checksum, so Load looks past it).
func editInt8(t *testing.T, b []byte, f func(c *fileContents)) []byte {
	t.Helper()
	c, err := decodeFile(b)
	if err != nil {
		t.Fatal(err)
	}
	f(c)
	var out bytes.Buffer
	if err := encodeFile(&out, c); err != nil {
		t.Fatal(err)
	}
	return out.Bytes()
}

// TestInt8BadFiles: an integer section with a zero or NaN scale, a shape
// or length that disagrees with the float configuration, int8 tensors in a
// version-2 file, and float template or head tensors in a version-3 file
// are each rejected with an error naming the field.
func TestInt8BadFiles(t *testing.T) {
	_, _, _, qb, _ := quantModels(t)
	setF := func(name string, i int, v float32) func(*fileContents) {
		return func(c *fileContents) { c.tensor(name).F[i] = v }
	}
	for _, c := range []struct {
		name string
		edit func(*fileContents)
		want string
	}{
		{"zero head scale", setF("int8.head.scale1", 3, 0), "scale1"},
		{"zero hidden scale", setF("int8.head.hscale", 0, 0), "hscale"},
		{"zero template scale", setF("int8.templates.0.oscale", 1, 0), "oscale"},
		{"zero pooled scale", setF("int8.pool.scale", 5, 0), "int8.pool.scale"},
		{"zero input scale", setF("int8.templates.0.input", 0, 0), "input"},
		{"hidden units", func(c *fileContents) {
			var cfg Config
			_ = json.Unmarshal(c.Config, &cfg)
			cfg.Head.Hidden = 100
			c.Config, _ = json.Marshal(cfg)
		}, "float configuration"},
		{"template count", func(c *fileContents) {
			var cfg Config
			_ = json.Unmarshal(c.Config, &cfg)
			cfg.Templates[0].K = 31
			c.Config, _ = json.Marshal(cfg)
		}, "int8.templates.0"},
		{"pooled length", func(c *fileContents) {
			t := c.tensor("int8.pool.scale")
			t.F, t.Shape = t.F[:len(t.F)-1], []int{len(t.F) - 1}
		}, "int8.pool"},
		{"version 2 with int8 tensors", func(c *fileContents) { c.Version = 2 }, "int8"},
		{"float head tensor", func(c *fileContents) {
			c.Tensors = append(c.Tensors, tensor{Name: "head.w", DType: Float32, Shape: []int{1}, F: []float32{1}})
		}, "head.w"},
	} {
		_, err := Load(bytes.NewReader(editInt8(t, qb, c.edit)))
		t.Logf("%s: %v", c.name, err)
		if err == nil || !errors.Is(err, ErrMalformed) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v; want ErrMalformed naming %q", c.name, err, c.want)
		}
	}
	// A NaN scale is caught by the file check (every float32 finite).
	b := editInt8(t, qb, setF("int8.head.scale2", 0, 1))
	c, _ := decodeFile(b)
	off := int64(prefixLen) + int64(binary.LittleEndian.Uint32(b[12:]))
	off += pad(off)
	for _, ti := range c.Tensors {
		if ti.Name == "int8.head.scale2" {
			break
		}
		off += int64(ti.DType.size()) * product(ti.Shape)
	}
	binary.LittleEndian.PutUint32(b[off:], math.Float32bits(float32(math.NaN())))
	_, err := Load(bytes.NewReader(resum(b)))
	if err == nil || !strings.Contains(err.Error(), "int8.head.scale2") {
		t.Errorf("NaN scale: error %v; want one naming int8.head.scale2", err)
	}
	// A reader of versions up to 2 rejects version 3 as written by a newer
	// striate: the same check this build applies to the versions above
	// maxReadVersion.
	v5 := append([]byte(nil), qb...)
	binary.LittleEndian.PutUint32(v5[8:], maxReadVersion+1)
	if _, err := Load(bytes.NewReader(resum(v5))); !errors.Is(err, ErrUnsupportedVersion) || !strings.Contains(err.Error(), "newer striate") {
		t.Errorf("version %d: error %v; want ErrUnsupportedVersion saying a newer striate wrote it", maxReadVersion+1, err)
	}
}

// Files of the int8 cross-architecture check (see testdata/README.md):
//
//	small_int8.striate   small.stm quantised on the first 1000 MNIST
//	                     training digits (amd64)
//	small_int8_expected.json  the integer logits and classes it gave on
//	                     digits32.u8 (amd64)
const (
	smallInt8         = "../testdata/pipeline/small_int8.striate"
	smallInt8Expected = "../testdata/pipeline/small_int8_expected.json"
)

type int8Expected struct {
	Arch    string    `json:"arch"`
	Classes []int     `json:"classes"`
	Logits  [][]int32 `json:"logits"`
}

// TestCrossArchInt8 loads the committed int8 model (written on amd64) and
// checks that on the committed digits it gives exactly the committed
// integer logits and classes. The same test runs under qemu-aarch64 (see
// TestCrossArchModel for the commands); the integer path is exact, so the
// logits match bit for bit unless a float front-end value sits within
// float32 rounding of a code boundary.
func TestCrossArchInt8(t *testing.T) {
	if *update {
		writeSmallInt8(t)
	}
	m, err := LoadFile(smallInt8)
	if err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(smallInt8Expected)
	if err != nil {
		t.Fatal(err)
	}
	var want int8Expected
	if err := json.Unmarshal(b, &want); err != nil {
		t.Fatal(err)
	}
	got := int8Logits(m, digits32(t))
	for i := range got.Classes {
		if got.Classes[i] != want.Classes[i] {
			t.Errorf("digit %d: class %d on %s; %d on %s", i, got.Classes[i], runtime.GOARCH, want.Classes[i], want.Arch)
		}
		for c := range got.Logits[i] {
			if got.Logits[i][c] != want.Logits[i][c] {
				t.Errorf("digit %d class %d: integer logit %d on %s; %d on %s", i, c, got.Logits[i][c], runtime.GOARCH, want.Logits[i][c], want.Arch)
			}
		}
	}
}

func int8Logits(m *Model, imgs [][]float32) int8Expected {
	e := int8Expected{Arch: runtime.GOARCH}
	w, iw := new(work), new(int8Work)
	for _, img := range imgs {
		l := m.q.head.Logits(nil, m.int8Codes(m.plan.input(w, img, 28, 28), w, iw))
		e.Logits = append(e.Logits, l)
		p, _ := m.PredictBatch([][]float32{img}, 28, 28, 1)
		e.Classes = append(e.Classes, argmax(p[0]))
	}
	return e
}

func writeSmallInt8(t *testing.T) {
	train, _ := mnist(t)
	fm, err := LoadFile(smallModel)
	if err != nil {
		t.Fatal(err)
	}
	q, err := fm.Quantize(train, QuantizeOptions{Images: 1000, Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	if err := q.SaveFile(smallInt8); err != nil {
		t.Fatal(err)
	}
	m, err := LoadFile(smallInt8)
	if err != nil {
		t.Fatal(err)
	}
	js, _ := json.MarshalIndent(int8Logits(m, digits32(t)), "", " ")
	if err := os.WriteFile(smallInt8Expected, js, 0o644); err != nil {
		t.Fatal(err)
	}
}

// TestInt8AccuracyLong is the full-scale int8 check: the digits preset on
// all of MNIST and the garments preset on all of Fashion-MNIST, each
// quantised on 1,000 training images, scored on the 10,000 test images;
// the int8 model must be within int8AccTol of the float one. Run with
//
//	STRIATE_LONG=1 GOEXPERIMENT=simd go test -v -timeout 2h -run Int8AccuracyLong ./pipeline
func TestInt8AccuracyLong(t *testing.T) {
	if os.Getenv("STRIATE_LONG") != "1" {
		t.Skip("full-scale int8 accuracy: set STRIATE_LONG=1 (two full fits, tens of minutes on 2 cores)")
	}
	for _, c := range []struct {
		name, preset string
		load         func(datasets.Split, string) (*datasets.Set, error)
	}{{"mnist", "digits", datasets.LoadMNIST}, {"fashion", "garments", datasets.LoadFashionMNIST}} {
		t.Run(c.name, func(t *testing.T) {
			train, err := c.load(datasets.Train, "")
			if err != nil {
				t.Skipf("%s not available: %v", c.name, err)
			}
			test, err := c.load(datasets.Test, "")
			if err != nil {
				t.Skipf("%s not available: %v", c.name, err)
			}
			cfg, err := Preset(c.preset)
			if err != nil {
				t.Fatal(err)
			}
			w := runtime.GOMAXPROCS(0)
			fm, err := Fit(cfg, train, FitOptions{Workers: w})
			if err != nil {
				t.Fatal(err)
			}
			qm, err := fm.Quantize(train, QuantizeOptions{Workers: w})
			if err != nil {
				t.Fatal(err)
			}
			af, _ := Accuracy(fm, test, nil, w, nil)
			aq, _ := Accuracy(qm, test, nil, w, nil)
			var fb, qb bytes.Buffer
			_ = fm.Save(&fb)
			_ = qm.Save(&qb)
			t.Logf("%s: float %.2f%%, int8 %.2f%% (Δ %+.2f pt); file %d → %d bytes (%.1f%%)", c.name, 100*af, 100*aq, 100*(aq-af), fb.Len(), qb.Len(), 100*float64(qb.Len())/float64(fb.Len()))
			if math.Abs(aq-af) > int8AccTol {
				t.Errorf("int8 accuracy %.2f%% differs by more than %.1f pt from the float model's %.2f%%", 100*aq, 100*int8AccTol, 100*af)
			}
		})
	}
}
