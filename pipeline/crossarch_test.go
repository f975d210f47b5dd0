package pipeline

import (
	"bytes"
	"encoding/json"
	"flag"
	"math"
	"os"
	"runtime"
	"testing"

	"github.com/striate/striate/learn"
)

var update = flag.Bool("update", false, "regenerate testdata/pipeline/small.stm and its expected predictions (needs MNIST)")

// Files of the cross-architecture check (see testdata/README.md):
//
//	small.stm           a small model (front end, one template layer, guard,
//	                    softmax head) fitted on amd64 on 1000 MNIST digits
//	digits32.u8         the first 32 MNIST test digits, 28×28 bytes each
//	small_expected.json the classes and probabilities the model gave on amd64
const (
	smallModel    = "../testdata/pipeline/small.stm"
	smallDigits   = "../testdata/pipeline/digits32.u8"
	smallExpected = "../testdata/pipeline/small_expected.json"
)

// probTol is the largest difference in a class probability allowed between
// the amd64 run that wrote small_expected.json and this run. Features are
// not bit-identical across architectures (arm64 fuses multiply-adds, and
// summation order may differ), only equal to float32 rounding (~1e-6
// relative) per operation; through the front end, templates and head such
// differences stay below 1e-5 in a probability, so 1e-3 leaves a wide margin
// while still catching any real change of the computation.
const probTol = 1e-3

type expected struct {
	Arch    string      `json:"arch"`
	Classes []int       `json:"classes"`
	Probs   [][]float32 `json:"probs"`
}

func smallConfig() Config {
	return Config{
		Templates: []learn.TemplateConfig{{K: 16, PatchSize: 3, Patches: 4000, Iters: 5}},
		Pool:      PoolConfig{Size: 2, Keep: new(true)},
		Head:      learn.HeadConfig{Kind: learn.KindSoftmax, Epochs: 5, Schedule: learn.ScheduleConstant, ValFrac: 0.1},
		Unlabeled: 1000,
		Seed:      11,
	}
}

func digits32(t *testing.T) [][]float32 {
	b, err := os.ReadFile(smallDigits)
	if err != nil {
		t.Fatal(err)
	}
	if len(b) != 32*28*28 {
		t.Fatalf("%s has %d bytes; want %d", smallDigits, len(b), 32*28*28)
	}
	imgs := make([][]float32, 32)
	for i := range imgs {
		imgs[i] = make([]float32, 28*28)
		for j := range imgs[i] {
			imgs[i][j] = float32(b[i*28*28+j]) / 255
		}
	}
	return imgs
}

// TestCrossArchModel loads the committed model (written on amd64) and checks
// that it predicts the committed classes, with probabilities within probTol.
// The same test passes when built with GOARCH=arm64 (run it under
// qemu-aarch64: CGO_ENABLED=0 GOARCH=arm64 go test -c ./pipeline, then
// qemu-aarch64 ./pipeline.test -test.run CrossArch).
func TestCrossArchModel(t *testing.T) {
	if *update {
		writeSmallModel(t)
	}
	m, err := LoadFile(smallModel)
	if err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(smallExpected)
	if err != nil {
		t.Fatal(err)
	}
	var want expected
	if err := json.Unmarshal(b, &want); err != nil {
		t.Fatal(err)
	}
	probs, err := m.PredictBatch(digits32(t), 28, 28, 2)
	if err != nil {
		t.Fatal(err)
	}
	worst := 0.0
	for i, p := range probs {
		if c := argmax(p); c != want.Classes[i] {
			t.Errorf("digit %d: class %d on %s; %d on %s", i, c, runtime.GOARCH, want.Classes[i], want.Arch)
		}
		for k := range p {
			worst = math.Max(worst, math.Abs(float64(p[k]-want.Probs[i][k])))
		}
	}
	if worst > probTol {
		t.Errorf("largest probability difference from %s: %.3g; tolerance %g", want.Arch, worst, probTol)
	}
	t.Logf("%s vs %s: classes equal, largest probability difference %.3g", runtime.GOARCH, want.Arch, worst)
}

func writeSmallModel(t *testing.T) {
	train, test := mnist(t)
	m, err := Fit(smallConfig(), train.First(1000), FitOptions{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := m.Save(&buf); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(smallModel, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(smallDigits, test.First(32).Pix, 0o644); err != nil {
		t.Fatal(err)
	}
	probs, err := m.PredictBatch(digits32(t), 28, 28, 2)
	if err != nil {
		t.Fatal(err)
	}
	e := expected{Arch: runtime.GOARCH, Probs: probs}
	for _, p := range probs {
		e.Classes = append(e.Classes, argmax(p))
	}
	js, _ := json.MarshalIndent(e, "", " ")
	if err := os.WriteFile(smallExpected, js, 0o644); err != nil {
		t.Fatal(err)
	}
}
