package v1layer

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

// The inner loops in use (SIMD in a GOEXPERIMENT=simd build on a CPU with
// AVX2+FMA, else the portable ones) agree with the portable loops on
// random data, for lengths around the 8- and 32-lane block sizes. In the
// plain build both sides are the portable loops and the test checks the
// harness only. Tolerance: relative 1e-6 of the sum of |terms| — the two
// differ only in summation order and in fused vs separate rounding.
func TestSIMDMatchesPortable(t *testing.T) {
	t.Logf("build: %s", Build())
	rng := rand.New(rand.NewPCG(9, 9))
	rnd := func(n int) []float32 {
		x := make([]float32, n)
		for i := range x {
			x[i] = rng.Float32()*2 - 1
		}
		return x
	}
	check := func(name string, got, want []float32, scale float64) {
		t.Helper()
		for i := range want {
			if d := math.Abs(float64(got[i] - want[i])); d > 1e-6*scale {
				t.Fatalf("%s: element %d = %g, portable %g", name, i, got[i], want[i])
			}
		}
	}
	for _, n := range []int{8, 16, 24, 32, 40, 64, 72, 256, 264} {
		for _, s := range []int{1, 3, 11, 15, 29} {
			const stride = 300
			nt := 1 + rng.IntN(3)
			srcs, taps := make([][]float32, nt), make([]filt, nt)
			for t := range srcs {
				srcs[t] = rnd(stride*(s+4) + n + s)
				taps[t] = mkFilt(rnd(s))
			}
			scale := float64(nt * s)
			a, b := make([]float32, n), make([]float32, n)
			hsum(a, n, srcs, taps, 5)
			hsumGo(b, n, srcs, taps, 5)
			check("hsum", a, b, scale)
			vsum(a, n, srcs, taps, 3, stride)
			vsumGo(b, n, srcs, taps, 3, stride)
			check("vsum", a, b, scale)
			if vsum2 != nil && n%16 == 0 {
				// Two filter sets over the same sources: each output
				// equals its own single pass.
				tb := make([]filt, nt)
				for t := range tb {
					tb[t] = mkFilt(rnd(s))
				}
				a2, b2 := make([]float32, n), make([]float32, n)
				for _, step := range []int{1, stride} {
					vsum2(a, a2, n, srcs, taps, tb, 3, step)
					vsumGo(b, n, srcs, taps, 3, step)
					vsumGo(b2, n, srcs, tb, 3, step)
					check("vsum2 first", a, b, scale)
					check("vsum2 second", a2, b2, scale)
				}
			}
			if n <= 32 {
				const ds = 40
				a3, b3 := make([]float32, 2*ds+n), make([]float32, 2*ds+n)
				sum3(a3, ds, n, srcs, taps, 5, 1, 7)
				sum3Go(b3, ds, n, srcs, taps, 5, 1, 7)
				check("sum3 horizontal", a3, b3, scale)
				sum3(a3, ds, n, srcs, taps, 3, stride, stride)
				sum3Go(b3, ds, n, srcs, taps, 3, stride, stride)
				check("sum3 vertical", a3, b3, scale)
			}
		}
		e, o := rnd(n+3), rnd(n+3)
		a, b := make([]float32, n+3), make([]float32, n+3)
		energyTo(a, e, o)
		energyGo(b, e, o)
		check("energy", a, b, 2)
		copy(a, e)
		copy(b, e)
		maxInto(a, o)
		maxIntoGo(b, o)
		check("maxInto", a, b, 1)
		c3 := rnd(n + 3)
		max2To(a, e, o)
		max2Go(b, e, o)
		check("max2", a, b, 1)
		max3To(a, e, o, c3)
		max3Go(b, e, o, c3)
		check("max3", a, b, 1)
		min2To(a, e, o)
		min2Go(b, e, o)
		check("min2", a, b, 1)
		min3To(a, e, o, c3)
		min3Go(b, e, o, c3)
		check("min3", a, b, 1)
		e1, o1, e2, o2 := rnd(n+3), rnd(n+3), rnd(n+3), rnd(n+3)
		esq2To(a, e, e1, o, o1)
		esq2Go(b, e, e1, o, o1)
		check("esq2", a, b, 2)
		esq3To(a, e, e1, e2, o, o1, o2)
		esq3Go(b, e, e1, e2, o, o1, o2)
		check("esq3", a, b, 2)
		for i := range a {
			a[i] = float32(i%7) * 0.37
		}
		copy(b, a)
		sqrtsOf(a)
		sqrtsGo(b)
		check("sqrts", a, b, 2)
	}
}

// Many shapes, including odd heights and widths just off the SIMD block
// sizes (where a row's overrun meets the next row), match the float64
// reference; both borders.
func TestApplyShapes(t *testing.T) {
	ks, sizes, _ := loadBenchKernels(t)
	rng := rand.New(rand.NewPCG(11, 12))
	shapes := [][2]int{{15, 15}, {16, 17}, {29, 31}, {31, 33}, {17, 63}, {40, 65}, {21, 97}, {37, 256}}
	if testing.Short() {
		shapes = shapes[:3]
	}
	for _, b := range []Border{BorderZero, BorderReflect} {
		f, err := New(Config{Border: b})
		if err != nil {
			t.Fatal(err)
		}
		for _, hw := range shapes {
			h, w := hw[0], hw[1]
			img32, img64 := randImage(rng, h, w)
			var dst Maps
			f.Apply(&dst, img32, h, w)
			want := refFrontEnd(img64, h, w, ks, sizes, b)
			var worst float64
			for c := range want {
				worst = math.Max(worst, maxAbsDiff(dst.Channel(c), want[c]))
			}
			if worst > 1e-5 {
				t.Errorf("%s %dx%d: max |Δ| = %.3g vs float64 reference, want ≤ 1e-5", b, h, w, worst)
			}
		}
	}
}

// The paired passes (plan.pairUp, vsum2: two kernels or two first passes
// over the same planes in one pass) give bit for bit the maps of the
// single passes they replace: each output is the same sequence of fused
// multiply-adds. Widths that take the paired path (a multiple of 16 above
// 32) and one that does not; both borders.
func TestPairedPassesMatchSingle(t *testing.T) {
	if vsum2 == nil {
		t.Skip("no paired loops in this build (" + Build() + ")")
	}
	rng := rand.New(rand.NewPCG(15, 16))
	for _, b := range []Border{BorderZero, BorderReflect} {
		f, err := New(Config{Border: b})
		if err != nil {
			t.Fatal(err)
		}
		npair := 0
		for _, k := range f.eng.p.ks {
			if k.mate >= 0 {
				npair++
			}
		}
		if npair != 8 { // DoG: none; per Gabor size: 0°, 90°, 45°/135° even, 45°/135° odd
			t.Fatalf("%d kernel pairs planned, want 8", npair)
		}
		for _, hw := range [][2]int{{40, 48}, {33, 256}, {31, 64}, {30, 40}} {
			h, w := hw[0], hw[1]
			img, _ := randImage(rng, h, w)
			var got, want Maps
			f.Apply(&got, img, h, w)
			saved := vsum2
			vsum2 = nil
			f.Apply(&want, img, h, w)
			vsum2 = saved
			for i := range want.Pix {
				if got.Pix[i] != want.Pix[i] {
					t.Fatalf("%s %dx%d: element %d = %g paired, %g single", b, h, w, i, got.Pix[i], want.Pix[i])
				}
			}
		}
	}
}

// A learned-style bank (full-rank random kernels, one pair, one unpaired
// kernel) takes the direct path where the separable cost would not be
// lower, and still matches the float64 reference.
func TestArbitraryBankMatchesReference(t *testing.T) {
	rng := rand.New(rand.NewPCG(13, 14))
	bank := &Bank{}
	for i := 0; i < 3; i++ {
		k := Kernel{Size: 9, W: make([]float32, 81), Meta: Channel{Kind: KindLearned, Pair: -1}}
		for j := range k.W {
			k.W[j] = float32(rng.NormFloat64() * 0.1)
		}
		bank.Kernels = append(bank.Kernels, k)
	}
	bank.Kernels[0].Meta.Pair, bank.Kernels[1].Meta.Pair = 1, 0
	f, err := New(Config{DoG: DoGConfig{Disable: true}, Gabor: GaborConfig{Disable: true}, Bank: bank, Pool: PoolConfig{Size: 1}})
	if err != nil {
		t.Fatal(err)
	}
	for i, k := range f.eng.p.ks {
		if !k.direct {
			t.Errorf("full-rank 9×9 kernel %d planned as separable (%d terms)", i, len(k.terms))
		}
	}
	h, w := 23, 30
	img32, img64 := randImage(rng, h, w)
	var out Maps
	f.Apply(&out, img32, h, w)
	if out.C != 3 { // one energy channel, two rectified
		t.Fatalf("C = %d, want 3 (energy of the pair, on/off of the unpaired kernel)", out.C)
	}
	k64 := func(i int) []float64 { return f64s(bank.Kernels[i].W) }
	r0, r1, r2 := refCorrelate(img64, h, w, k64(0), 9, BorderZero), refCorrelate(img64, h, w, k64(1), 9, BorderZero), refCorrelate(img64, h, w, k64(2), 9, BorderZero)
	e, on, off := make([]float64, h*w), make([]float64, h*w), make([]float64, h*w)
	for i := range e {
		e[i] = math.Hypot(r0[i], r1[i])
		on[i], off[i] = math.Max(r2[i], 0), math.Max(-r2[i], 0)
	}
	for c, want := range [][]float64{e, on, off} {
		if d := maxAbsDiff(out.Channel(c), want); d > 1e-5 {
			t.Errorf("channel %d: max |Δ| = %.3g vs float64 reference", c, d)
		}
	}
	if ch := f.Channels(); ch[0].Kind != KindEnergy || ch[1].Kind != KindRectified || ch[1].Polarity != 1 || ch[2].Polarity != -1 {
		t.Errorf("channels %+v", ch)
	}
}

// Steady-state Apply allocates nothing (the hot path reuses pooled scratch).
func TestApplyAllocatesNothing(t *testing.T) {
	if raceOn {
		t.Skip("sync.Pool drops items at random under the race detector")
	}
	f, err := New(Config{})
	if err != nil {
		t.Fatal(err)
	}
	for _, sz := range []int{28, 64} {
		img := benchImages(1, sz, sz)[0]
		var dst Maps
		f.Apply(&dst, img, sz, sz)
		if n := testing.AllocsPerRun(20, func() { f.Apply(&dst, img, sz, sz) }); n != 0 {
			t.Errorf("%dx%d: Apply allocates %.1f times per call, want 0", sz, sz, n)
		}
	}
}

// ApplyBatch with several workers gives the same maps as Apply.
func TestApplyBatchMatchesApply(t *testing.T) {
	f, err := New(Config{})
	if err != nil {
		t.Fatal(err)
	}
	imgs := benchImages(9, 30, 28)
	dst := make([]Maps, len(imgs))
	f.ApplyBatch(dst, imgs, 30, 28, 3)
	for i, img := range imgs {
		var one Maps
		f.Apply(&one, img, 30, 28)
		for j := range one.Pix {
			if one.Pix[j] != dst[i].Pix[j] {
				t.Fatalf("image %d differs at %d", i, j)
			}
		}
	}
}

func TestSizeAndConfigErrors(t *testing.T) {
	f, err := New(Config{})
	if err != nil {
		t.Fatal(err)
	}
	if _, _, _, err := f.OutShape(28, 9000); err == nil || !strings.Contains(err.Error(), "MaxSide") {
		t.Errorf("OutShape(28, 9000) = %v, want a MaxSide error", err)
	}
	func() {
		defer func() {
			if r := recover(); r == nil || !strings.Contains(r.(string), "smaller than") {
				t.Errorf("Apply on a 10×10 image: panic %v, want the size message", r)
			}
		}()
		var d Maps
		f.Apply(&d, make([]float32, 100), 10, 10)
	}()
	bad := []Config{
		{Complex: ComplexConfig{Mode: "sum"}},
		{Border: "wrap"},
		{Pool: PoolConfig{Size: 4}},
		{Pool: PoolConfig{Size: 3, Stride: 9}},
		{Gabor: GaborConfig{Phases: 4}}, // energy with four polarities
		{Bank: &Bank{Kernels: []Kernel{{Size: 3, W: make([]float32, 9), Meta: Channel{Pair: -1}}}}}, // Gabor not disabled
		{Gabor: GaborConfig{Disable: true}, Bank: &Bank{Kernels: []Kernel{{Size: 2, W: make([]float32, 4), Meta: Channel{Pair: -1}}}}},
		{DoG: DoGConfig{Disable: true}, Gabor: GaborConfig{Disable: true}},
		{Complex: ComplexConfig{Norm: NormConfig{Enabled: true, Sigma: -1}}},
		{Complex: ComplexConfig{EndStop: EndStopConfig{Enabled: true, Shift: 10}}},
	}
	for i, c := range bad {
		_, err := New(c)
		if err == nil {
			t.Errorf("config %d accepted: %+v", i, c)
		} else if !strings.HasPrefix(err.Error(), "v1layer: ") {
			t.Errorf("config %d: error %q lacks the package prefix", i, err)
		}
	}
}
