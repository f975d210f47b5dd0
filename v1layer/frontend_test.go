package v1layer

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"reflect"
	"strings"
	"testing"
)

// The default kernels equal the reference work's kernels
// (../shared/bench/filterbank_kernels.json, float64): tolerance 1e-6, the
// float32 rounding of values ≤ 1 is 6e-8, so 1e-6 leaves room only for a
// different formula, not for rounding.
func TestDefaultKernelsMatchBench(t *testing.T) {
	f, err := New(Config{})
	if err != nil {
		t.Fatal(err)
	}
	ks, sizes, names := loadBenchKernels(t)
	got := f.Kernels()
	if len(got) != len(ks) {
		t.Fatalf("%d kernels, bench has %d", len(got), len(ks))
	}
	for i := range ks {
		if got[i].Size != sizes[i] {
			t.Fatalf("kernel %d (%s): size %d, bench %d", i, names[i], got[i].Size, sizes[i])
		}
		var worst float64
		for j, v := range ks[i] {
			worst = math.Max(worst, math.Abs(float64(got[i].W[j])-v))
		}
		if worst > 1e-6 {
			t.Errorf("kernel %d (%s): max |Δ| = %.3g vs bench, want ≤ 1e-6", i, names[i], worst)
		}
	}
}

// Apply equals a float64 direct implementation of the reference work built
// from the bench's own float64 kernels. Tolerance 1e-5: float32 sums of up
// to 841 products of magnitude ≤ 0.1 accumulate ~1e-6 rounding; the bench
// README asks for ~1e-6 and the brief for ~1e-5.
func TestApplyMatchesFloat64Reference(t *testing.T) {
	ks, sizes, _ := loadBenchKernels(t)
	rng := rand.New(rand.NewPCG(1, 2))
	for _, b := range []Border{BorderZero, BorderReflect} {
		f, err := New(Config{Border: b})
		if err != nil {
			t.Fatal(err)
		}
		for _, hw := range [][2]int{{28, 28}, {33, 47}, {64, 40}} {
			h, w := hw[0], hw[1]
			img32, img64 := randImage(rng, h, w)
			var dst Maps
			f.Apply(&dst, img32, h, w)
			want := refFrontEnd(img64, h, w, ks, sizes, b)
			if dst.C != len(want) {
				t.Fatalf("C = %d, want %d", dst.C, len(want))
			}
			var worst float64
			for c := range want {
				got := dst.Channel(c)
				for j, v := range want[c] {
					worst = math.Max(worst, math.Abs(float64(got[j])-v))
				}
			}
			if worst > 1e-5 {
				t.Errorf("%s %dx%d: max |Δ| = %.3g vs float64 reference, want ≤ 1e-5", b, h, w, worst)
			}
		}
	}
}

func TestOutShapeAndChannels(t *testing.T) {
	f, err := New(Config{})
	if err != nil {
		t.Fatal(err)
	}
	c, oh, ow, err := f.OutShape(28, 28)
	if err != nil || c != 12 || oh != 14 || ow != 14 {
		t.Fatalf("OutShape(28,28) = %d,%d,%d,%v; want 12,14,14 (filterbank.json per_image 28x28)", c, oh, ow, err)
	}
	if c, oh, ow, _ = f.OutShape(256, 255); c != 12 || oh != 128 || ow != 128 {
		t.Fatalf("OutShape(256,255) = %d,%d,%d; want 12,128,128", c, oh, ow)
	}
	ch := f.Channels()
	wantKinds := []Kind{KindDoG, KindDoG, KindDoG, KindDoG}
	for i := 0; i < 8; i++ {
		wantKinds = append(wantKinds, KindEnergy)
	}
	for i, k := range wantKinds {
		if ch[i].Kind != k {
			t.Errorf("channel %d kind %v, want %v", i, ch[i].Kind, k)
		}
	}
	if ch[0].Polarity != 1 || ch[1].Polarity != -1 || ch[2].Sigma != 2 {
		t.Errorf("DoG channel metadata %+v %+v %+v", ch[0], ch[1], ch[2])
	}
	if ch[9].Wavelength != 8 || math.Abs(ch[9].Orientation-math.Pi/4) > 1e-12 || ch[9].Scale != 1 {
		t.Errorf("channel 9 = %+v; want λ=8, θ=45°, scale 1 (cx_l8_t45)", ch[9])
	}
	if _, _, _, err := f.OutShape(14, 28); err == nil || !strings.Contains(err.Error(), "smaller than 15×15") {
		t.Errorf("OutShape(14,28) error = %v; want the minimum-size message", err)
	}
}

func TestConfigJSONRoundTrip(t *testing.T) {
	bank, err := GaborBank(GaborConfig{Orientations: 2, Scales: 1})
	if err != nil {
		t.Fatal(err)
	}
	cfgs := []Config{
		{},
		{Border: BorderReflect, DoG: DoGConfig{Sigmas: []float64{1.5}, Ratio: 2, LCN: LCNConfig{Enabled: true}}},
		{Gabor: GaborConfig{Disable: true}, Bank: bank, Complex: ComplexConfig{Norm: NormConfig{Enabled: true, Sigma: 0.2}}},
		{Complex: ComplexConfig{Mode: "rectified", EndStop: EndStopConfig{Enabled: true}}, Gabor: GaborConfig{Phases: 4}, Pool: PoolConfig{Size: 5, Stride: 3, Scales: true}},
	}
	for i, c := range cfgs {
		b, err := json.Marshal(c)
		if err != nil {
			t.Fatal(err)
		}
		var back Config
		if err := json.Unmarshal(b, &back); err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(c, back) {
			t.Errorf("config %d: round trip changed it:\n%+v\n%+v", i, c, back)
		}
		if _, err := New(back); err != nil {
			t.Errorf("config %d: New: %v", i, err)
		}
	}
}
