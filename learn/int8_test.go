package learn

import (
	"math"
	"math/big"
	"math/bits"
	"math/rand/v2"
	"reflect"
	"strings"
	"testing"

	"github.com/striate/striate/v1layer"
)

// The integer path is checked against float64 evaluations of the formulas
// of Jacob et al. 2018 (CVPR), "Quantization and training of neural
// networks for efficient integer-arithmetic-only inference": eq. 1 (r =
// S(q − Z)), eqs. 4-5 (the requantised product and its multiplier M), eq. 6
// (M = 2^−n·M0, M0 ∈ [0.5, 1)) and eq. 7 (zero points folded into sums).

// tieTol is how close (in output steps) a float64 reference value may lie
// to a rounding boundary k + ½ for the integer path to round it the other
// way. The integer path carries 16 fraction bits before its last rounding
// and a relative error below 2^−20 from its fixed-point reciprocal square
// root and multipliers, so on values up to 255 steps it is off by less than
// 3·10⁻⁴ of a step; 10⁻² leaves a wide margin and still catches any error
// in the formulas (which moves values by whole steps).
const tieTol = 1e-2

// nearTie reports whether v lies within tieTol of a half-integer.
func nearTie(v float64) bool { return math.Abs(v-math.Floor(v)-0.5) < tieTol }

// refCode is clamp(round(v), 0, 255) in float64 (eq. 1 inverted).
func refCode(v float64) int { return int(min(max(math.Round(v), 0), 255)) }

// TestFixedMulEq6 checks the multiplier's fixed-point form against eq. 6
// (M = 2^−n·M0 with M0 ∈ [0.5, 1), so M0·2^31 ∈ [2^30, 2^31) and a relative
// error below 2^−31) and apply against the exact product computed with
// math/big, rounded half away from zero.
func TestFixedMulEq6(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, m := range []float64{1e-9, 3.3e-5, 0.3, 0.5, 0.75, 0.9999999, 1, 3.7, 255.5, 1000, 30000} {
		f, err := newFixedMul(m, "test")
		if err != nil {
			t.Fatalf("M = %g: %v", m, err)
		}
		if f.m0 < 1<<30 || f.m0 >= 1<<31 {
			t.Errorf("M = %g: M0·2^31 = %d outside [2^30, 2^31)", m, f.m0)
		}
		if rel := math.Abs(f.real()/m - 1); rel > 0x1p-31 {
			t.Errorf("M = %g: fixed-point value %g, relative error %.3g > 2^-31", m, f.real(), rel)
		}
		for i := 0; i < 2000; i++ {
			x := rng.Int64N(1<<41) - 1<<40
			if i < 4 {
				x = []int64{0, 1, -1, 1 << 40}[i]
			}
			got := f.apply(x)
			// Exact: sign(x)·⌊(|x|·m0 + 2^(s−1)) / 2^s⌋.
			p := new(big.Int).Mul(big.NewInt(x), new(big.Int).SetUint64(f.m0))
			neg := p.Sign() < 0
			p.Abs(p)
			p.Add(p, new(big.Int).Lsh(big.NewInt(1), uint(f.shift-1)))
			p.Rsh(p, uint(f.shift))
			if neg {
				p.Neg(p)
			}
			want := p.Int64()
			if !p.IsInt64() || want > satMax || want < -satMax {
				want = satMax
				if neg {
					want = -satMax
				}
			}
			if got != want {
				t.Fatalf("M = %g, x = %d: apply %d, exact %d", m, x, got, want)
			}
		}
	}
	for _, bad := range []float64{0, -1, math.NaN(), math.Inf(1), 1e30} {
		if _, err := newFixedMul(bad, "bad"); err == nil {
			t.Errorf("M = %g: no error", bad)
		}
	}
}

// TestQuantizeValueEq1: dequantising a code gives back the value within
// half a step (eq. 1), and ActivationScale holds 0 exactly (§2.1).
func TestQuantizeValueEq1(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for _, r := range [][2]float64{{0, 1}, {-0.3, 2.5}, {-4, -1}, {0.5, 7}} {
		s, z := ActivationScale(r[0], r[1])
		if got := float64(s) * float64(int32(QuantizeValue(0, s, z))-z); got != 0 {
			t.Errorf("range %v: 0 dequantises to %g", r, got)
		}
		lo, hi := min(r[0], 0), max(r[1], 0)
		for i := 0; i < 1000; i++ {
			v := lo + (hi-lo)*rng.Float64()
			q := QuantizeValue(float32(v), s, z)
			back := float64(s) * float64(int32(q)-z)
			if math.Abs(back-v) > float64(s)/2*(1+1e-6) {
				t.Fatalf("range %v: %g → code %d → %g; off by more than S/2 = %g", r, v, q, back, s/2)
			}
		}
	}
}

// refPositions evaluates the soft encoder in float64 on the dequantised
// codes of m and dequantised weights (eq. 1), returning per position and
// feature the value in output steps before rounding.
func refPositions(q *QuantTemplates, m *v1layer.Maps) []float64 {
	t := q.shape
	oh, ow := t.positions(m.H, m.W)
	k, dim, p, st := t.k, t.dim, t.p, t.cfg.Stride
	out := make([]float64, oh*ow*2*k)
	x := make([]float64, dim)
	for y := 0; y < oh; y++ {
		for xx := 0; xx < ow; xx++ {
			i := 0
			var s float64
			for c := 0; c < m.C; c++ {
				for dy := 0; dy < p; dy++ {
					for dx := 0; dx < p; dx++ {
						v := m.Pix[(c*m.H+y*st+dy)*m.W+xx*st+dx]
						x[i] = float64(q.sx) * float64(int32(QuantizeValue(v, q.sx, q.zx))-q.zx)
						s += x[i]
						i++
					}
				}
			}
			if q.normEps >= 0 {
				mean := s / float64(dim)
				var vr float64
				for _, v := range x {
					vr += (v - mean) * (v - mean)
				}
				inv := 1 / math.Sqrt(vr/float64(dim)+float64(q.normEps))
				for j := range x {
					x[j] = (x[j] - mean) * inv
				}
			}
			f := out[(y*ow+xx)*2*k:]
			for j := 0; j < k; j++ {
				var r float64
				for a, v := range x {
					r += float64(q.ws[j]) * float64(q.w[j*dim+a]) * v
				}
				r -= float64(q.fmu[j])
				f[j] = (r - float64(q.alpha)) / float64(q.os[j])
				f[k+j] = (-r - float64(q.alpha)) / float64(q.os[j])
			}
		}
	}
	return out
}

// TestQuantTemplatesMatchFloat64Reference: every per-position code of the
// integer encoder equals clamp(round(·)) of the float64 reference, except
// within tieTol of a rounding boundary, where it may differ by one; max
// and mean pooling of the codes give Encode's output. Cases: normalisation
// on and off, zero point 0 and not 0 (maps shifted negative), stride 1 and
// 2.
func TestQuantTemplatesMatchFloat64Reference(t *testing.T) {
	for _, c := range []struct {
		name  string
		cfg   TemplateConfig
		shift float32
	}{
		{"norm", TemplateConfig{K: 6, PatchSize: 5, Patches: 2000, Grids: []int{1, 2}, Seed: 3}, 0},
		{"norm-zeropoint-stride2", TemplateConfig{K: 5, PatchSize: 3, Stride: 2, Patches: 2000, Grids: []int{2}, Pool: PoolAvg, Seed: 4}, -0.3},
		{"no-norm", TemplateConfig{K: 4, PatchSize: 4, Patches: 2000, NormEps: -1, Grids: []int{1}, Seed: 5}, -0.1},
	} {
		t.Run(c.name, func(t *testing.T) {
			maps := randomMaps(40, 3, 11, 13, 7)
			for i := range maps {
				for j := range maps[i].Pix {
					maps[i].Pix[j] += c.shift
				}
			}
			tm := fitTemplates(t, c.cfg, maps[:30])
			q, err := tm.Quantize(maps[:30])
			if err != nil {
				t.Fatal(err)
			}
			if c.shift < 0 && q.zx == 0 {
				t.Fatalf("maps shifted by %g: zero point 0; the case should test Z_x ≠ 0", c.shift)
			}
			var ties, checked int
			s := &quantTmplScratch{}
			for mi := 30; mi < 40; mi++ {
				m := &maps[mi]
				ref := refPositions(q, m)
				oh, ow := q.features(s, m)
				for i, v := range ref {
					got, want := int(s.f[i]), refCode(v)
					checked++
					if got == want {
						continue
					}
					if nearTie(v) && (got-want == 1 || want-got == 1) {
						ties++
						continue
					}
					t.Fatalf("map %d, position %d, feature %d: code %d; float64 reference %.4f → %d", mi, i/(2*q.K()), i%(2*q.K()), got, v, want)
				}
				// Pooling of the codes.
				enc := q.Encode(nil, m)
				F, off := q.Features(), 0
				for _, g := range q.shape.cfg.Grids {
					for ff := 0; ff < F; ff++ {
						for gy := 0; gy < g; gy++ {
							for gx := 0; gx < g; gx++ {
								var mx, sum, n int
								for y := gy * oh / g; y < (gy+1)*oh/g; y++ {
									for x := gx * ow / g; x < (gx+1)*ow/g; x++ {
										v := int(s.f[(y*ow+x)*F+ff])
										mx, sum, n = max(mx, v), sum+v, n+1
									}
								}
								want := mx
								if q.shape.cfg.Pool == PoolAvg {
									want = int(math.Floor(float64(sum)/float64(n) + 0.5))
								}
								if got := int(enc[off+(ff*g+gy)*g+gx]); got != want {
									t.Fatalf("map %d grid %d feature %d cell (%d,%d): pooled %d, want %d", mi, g, ff, gy, gx, got, want)
								}
							}
						}
					}
					off += F * g * g
				}
			}
			t.Logf("%d codes checked, %d within %g of a rounding boundary rounded the other way", checked, ties, tieTol)
			if ties > checked/100 {
				t.Errorf("%d of %d codes off by one at a boundary; more than 1%% means the integer path is imprecise", ties, checked)
			}
		})
	}
}

// TestQuantTemplatesCloseToFloat: the int8 layer's dequantised features
// stay within a few output steps of the float layer's (the quantisation
// error of eq. 1 on inputs and weights, propagated).
func TestQuantTemplatesCloseToFloat(t *testing.T) {
	maps := randomMaps(40, 3, 11, 13, 7)
	tm := fitTemplates(t, TemplateConfig{K: 6, PatchSize: 5, Patches: 2000, Grids: []int{1, 2}, Seed: 3}, maps[:30])
	q, err := tm.Quantize(maps[:30])
	if err != nil {
		t.Fatal(err)
	}
	sc, err := q.FeatureScales(nil, 3, 11, 13)
	if err != nil {
		t.Fatal(err)
	}
	// meanSteps, worstSteps: inputs and weights carry half a step of
	// rounding each. The per-patch normalisation divides by the patch's
	// deviation, so the faint background of these maps (a few input steps
	// of noise) amplifies the input rounding, and max pooling over a cell of
	// 25-100 positions keeps the largest of those errors, about two of
	// their standard deviations (measured: mean 1.0, largest 5.8 steps);
	// the limits are twice the measured values, a formula error moves
	// features by tens of steps.
	const meanSteps, worstSteps = 2.0, 12.0
	worst, sum, cnt := 0.0, 0.0, 0
	for mi := 30; mi < 40; mi++ {
		f := tm.Encode(nil, &maps[mi])
		g := q.Encode(nil, &maps[mi])
		for i := range f {
			e := math.Abs(float64(f[i])-float64(sc[i])*float64(g[i])) / float64(sc[i])
			worst, sum, cnt = max(worst, e), sum+e, cnt+1
		}
	}
	t.Logf("difference from the float layer: mean %.3f, largest %.2f output steps", sum/float64(cnt), worst)
	if sum/float64(cnt) > meanSteps || worst > worstSteps {
		t.Errorf("int8 features differ from the float layer's by %.3f steps on average (limit %g), %.2f at most (limit %g)", sum/float64(cnt), meanSteps, worst, worstSteps)
	}
}

// quantHeadCase fits a head on blobs and quantises it with random input
// scales and zero points; it returns the head, its int8 form, the codes and
// the scales.
func quantHeadCase(t *testing.T, cfg HeadConfig) (*Head, *QuantHead, []uint8, []float32, []int32, int) {
	t.Helper()
	const n, d, k = 300, 12, 4
	X, y := blobs(n, d, k, 2, 9)
	for i := range X {
		X[i] -= 6
	}
	hd, _, err := cfg.Fit(X, y, k, nil)
	if err != nil {
		t.Fatal(err)
	}
	// Per-feature ranges of the rows, with a margin, give the scales;
	// the blobs straddle 0 after the shift by −6, so zero points are not 0.
	sc, zp := make([]float32, d), make([]int32, d)
	for i := 0; i < d; i++ {
		lo, hi := math.Inf(1), math.Inf(-1)
		for r := 0; r < n; r++ {
			lo, hi = min(lo, float64(X[r*d+i])), max(hi, float64(X[r*d+i]))
		}
		sc[i], zp[i] = ActivationScale(lo-0.1, hi+0.1)
	}
	codes := make([]uint8, n*d)
	for r := 0; r < n; r++ {
		for i := 0; i < d; i++ {
			codes[r*d+i] = QuantizeValue(X[r*d+i], sc[i], zp[i])
		}
	}
	q, err := hd.Quantize(sc, zp, codes, n)
	if err != nil {
		t.Fatal(err)
	}
	return hd, q, codes, sc, zp, n
}

// TestQuantHeadMatchesFloat64Reference checks the int8 head against the
// float64 evaluation of the folded formulas: the first layer's real value
// s1_j·(Σ w1·q + b1) is within the bound that eq. 1's rounding of the
// weights (half a step each) and of the bias allows of Σ fw·S(q − Z) + fb
// (eq. 7 folds the zero points), and each hidden code is round(s1·acc/hs)
// clamped (eqs. 4-6), except within tieTol of a boundary.
func TestQuantHeadMatchesFloat64Reference(t *testing.T) {
	for _, cfg := range []HeadConfig{{Kind: KindSoftmax, Epochs: 5}, {Kind: KindMLP, Hidden: 9, Epochs: 5}} {
		t.Run(cfg.Kind, func(t *testing.T) {
			hd, q, codes, sc, zp, n := quantHeadCase(t, cfg)
			d, m := hd.d, len(q.s1)
			acc := make([]int32, m)
			ties := 0
			for r := 0; r < n; r++ {
				x := codes[r*d : (r+1)*d]
				q.layer1(acc, x, new([]int16))
				for j := 0; j < m; j++ {
					real, bound := float64(hd.fb[j]), float64(q.s1[j])/2
					for i := 0; i < d; i++ {
						dq := float64(int32(x[i]) - zp[i])
						real += float64(hd.fw[j*d+i]) * float64(sc[i]) * dq
						bound += float64(q.s1[j]) / 2 * math.Abs(dq)
					}
					got := float64(q.s1[j]) * float64(acc[j])
					if math.Abs(got-real) > bound*(1+1e-6) {
						t.Fatalf("row %d unit %d: integer %g, float64 %g: off by %g > bound %g", r, j, got, real, math.Abs(got-real), bound)
					}
					if q.kind == KindMLP {
						v := float64(q.s1[j]) * float64(max(acc[j], 0)) / float64(q.hs[j])
						gotq, want := int(clampU8(q.hm[j].apply(int64(max(acc[j], 0))))), refCode(v)
						if gotq != want {
							if !nearTie(v) {
								t.Fatalf("row %d hidden %d: code %d; float64 %g → %d", r, j, gotq, v, want)
							}
							ties++
						}
					}
				}
			}
			// The int8 head classifies like the float head on these rows.
			agree := 0
			for r := 0; r < n; r++ {
				x := make([]float32, d)
				for i := range x {
					x[i] = sc[i] * float32(int32(codes[r*d+i])-zp[i])
				}
				pf := hd.Predict(nil, x, nil)
				pq := q.Predict(nil, codes[r*d:(r+1)*d])
				if argmaxF(pf) == argmaxF(pq) {
					agree++
				}
			}
			t.Logf("%s: %d ties; argmax agrees with the float head on %d of %d rows", cfg.Kind, ties, agree, n)
			// headAgree: 8-bit weights move a logit by well under the margin
			// of all but the closest rows (common practice: post-training int8
			// keeps top-1 within a fraction of a point).
			const headAgree = 0.98
			if float64(agree) < headAgree*float64(n) {
				t.Errorf("argmax agrees on %d of %d rows; want ≥ %.0f%%", agree, n, 100*headAgree)
			}
		})
	}
}

func argmaxF(p []float32) int {
	b := 0
	for i, v := range p {
		if v > p[b] {
			b = i
		}
	}
	return b
}

// TestQuantDeterministicAndRoundTrip: quantising twice gives identical
// tensors, and rebuilding from the tensors gives identical outputs.
func TestQuantDeterministicAndRoundTrip(t *testing.T) {
	_, q1, codes, _, _, n := quantHeadCase(t, HeadConfig{Kind: KindMLP, Hidden: 9, Epochs: 3})
	_, q2, _, _, _, _ := quantHeadCase(t, HeadConfig{Kind: KindMLP, Hidden: 9, Epochs: 3})
	if !reflect.DeepEqual(q1.Tensors(), q2.Tensors()) {
		t.Fatal("two quantisations of the same head differ")
	}
	back, err := NewQuantHeadFromTensors(KindMLP, q1.d, 9, q1.k, q1.Tensors())
	if err != nil {
		t.Fatal(err)
	}
	for r := 0; r < n; r++ {
		x := codes[r*q1.d : (r+1)*q1.d]
		if a, b := q1.Logits(nil, x), back.Logits(nil, x); !reflect.DeepEqual(a, b) {
			t.Fatalf("row %d: logits %v, rebuilt %v", r, a, b)
		}
	}
	maps := randomMaps(20, 3, 11, 13, 7)
	cfg := TemplateConfig{K: 6, PatchSize: 5, Patches: 2000, Seed: 3}
	tm := fitTemplates(t, cfg, maps)
	a, err := tm.Quantize(maps)
	if err != nil {
		t.Fatal(err)
	}
	b, _ := tm.Quantize(maps)
	if !reflect.DeepEqual(a.Tensors(), b.Tensors()) {
		t.Fatal("two quantisations of the same templates differ")
	}
	rt, err := NewQuantTemplatesFromTensors(cfg, 3, a.Tensors())
	if err != nil {
		t.Fatal(err)
	}
	for i := range maps {
		if x, y := a.Encode(nil, &maps[i]), rt.Encode(nil, &maps[i]); !reflect.DeepEqual(x, y) {
			t.Fatalf("map %d: rebuilt templates encode differently", i)
		}
	}
}

// TestQuantBadTensors: zero, negative and NaN scales, shapes that disagree
// with the float configuration, −128 weights and a mismatched
// normalisation are errors naming the tensor.
func TestQuantBadTensors(t *testing.T) {
	_, q, _, _, _, _ := quantHeadCase(t, HeadConfig{Kind: KindMLP, Hidden: 9, Epochs: 2})
	edit := func(ts []QuantTensor, name string, f func(*QuantTensor)) []QuantTensor {
		out := make([]QuantTensor, len(ts))
		for i, x := range ts {
			x.F, x.I8, x.I32 = append([]float32(nil), x.F...), append([]int8(nil), x.I8...), append([]int32(nil), x.I32...)
			if len(x.F) == 0 {
				x.F = nil
			}
			if len(x.I8) == 0 {
				x.I8 = nil
			}
			if len(x.I32) == 0 {
				x.I32 = nil
			}
			if x.Name == name {
				f(&x)
			}
			out[i] = x
		}
		return out
	}
	for _, c := range []struct {
		name, tensor, want string
		f                  func(*QuantTensor)
	}{
		{"zero scale", "scale1", "scale1", func(x *QuantTensor) { x.F[2] = 0 }},
		{"NaN scale", "hscale", "hscale", func(x *QuantTensor) { x.F[0] = float32(math.NaN()) }},
		{"negative scale", "scale2", "scale2", func(x *QuantTensor) { x.F[1] = -1 }},
		{"-128 weight", "w2", "w2", func(x *QuantTensor) { x.I8[0] = -128 }},
		{"shape", "w1", "w1", func(x *QuantTensor) { x.Shape = []int{x.Shape[1], x.Shape[0]} }},
	} {
		_, err := NewQuantHeadFromTensors(KindMLP, q.d, 9, q.k, edit(q.Tensors(), c.tensor, c.f))
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v; want one naming %q", c.name, err, c.want)
		}
	}
	if _, err := NewQuantHeadFromTensors(KindMLP, q.d, 10, q.k, q.Tensors()); err == nil || !strings.Contains(err.Error(), "float configuration") {
		t.Errorf("hidden 10 against a 9-unit head: error %v; want one about the float configuration", err)
	}
	maps := randomMaps(20, 3, 11, 13, 7)
	cfg := TemplateConfig{K: 6, PatchSize: 5, Patches: 2000, Seed: 3}
	tq, err := fitTemplates(t, cfg, maps).Quantize(maps)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name, tensor, want string
		cfg                TemplateConfig
		f                  func(*QuantTensor)
	}{
		{"zero oscale", "oscale", "oscale", cfg, func(x *QuantTensor) { x.F[3] = 0 }},
		{"zero input scale", "input", "input", cfg, func(x *QuantTensor) { x.F[0] = 0 }},
		{"norm mismatch", "input", "norm_eps", cfg, func(x *QuantTensor) { x.F[2] = -1 }},
		{"K mismatch", "w", "w", TemplateConfig{K: 7, PatchSize: 5, Patches: 2000, Seed: 3}, func(*QuantTensor) {}},
		{"zero point", "zero", "zero", cfg, func(x *QuantTensor) { x.I32[0] = 300 }},
	} {
		_, err := NewQuantTemplatesFromTensors(c.cfg, 3, edit(tq.Tensors(), c.tensor, c.f))
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v; want one naming %q", c.name, err, c.want)
		}
	}
	if _, err := NewQuantTemplatesFromTensors(cfg, 4, tq.Tensors()); err == nil {
		t.Error("4 channels against a 3-channel layer: no error")
	}
}

// TestQuantPredictAllocatesNothing guards the steady-state hot path.
func TestQuantPredictAllocatesNothing(t *testing.T) {
	if raceOn {
		t.Skip("sync.Pool drops items at random under the race detector")
	}
	_, q, codes, _, _, _ := quantHeadCase(t, HeadConfig{Kind: KindMLP, Hidden: 9, Epochs: 2})
	dst := make([]float32, q.k)
	x := codes[:q.d]
	q.Predict(dst, x)
	if a := testing.AllocsPerRun(50, func() { q.Predict(dst, x) }); a != 0 {
		t.Errorf("QuantHead.Predict: %v allocations per call; want 0", a)
	}
	maps := randomMaps(10, 3, 11, 13, 7)
	tq, err := fitTemplates(t, TemplateConfig{K: 6, PatchSize: 5, Patches: 2000, Seed: 3}, maps).Quantize(maps)
	if err != nil {
		t.Fatal(err)
	}
	out := tq.Encode(nil, &maps[0])
	if a := testing.AllocsPerRun(50, func() { tq.Encode(out, &maps[1]) }); a != 0 {
		t.Errorf("QuantTemplates.Encode: %v allocations per call; want 0", a)
	}
}

// TestPackedProductsExact: the packed pair products (two int8 rows per
// int64) and this build's kernel (int8Matrix; VPMADDWD in the SIMD build)
// give exactly the int32 sums of the plain products, at the
// extremes of the ranges (weights ±127, activations 255, up to
// maxQuantIn columns) and on random values, for odd and even row counts.
func TestPackedProductsExact(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 9))
	for _, c := range []struct{ m, d int }{{5, 300}, {64, 300}, {80, 301}, {4, 7}, {3, maxQuantIn}, {1, 1}} {
		for _, fill := range []string{"max", "min", "random"} {
			w := make([]int8, c.m*c.d)
			x := make([]uint8, c.d)
			y := make([]uint8, c.d)
			for i := range w {
				switch fill {
				case "max":
					w[i] = 127
				case "min":
					w[i] = -127
				default:
					w[i] = int8(rng.IntN(255) - 127)
				}
			}
			for i := range x {
				x[i], y[i] = 255, uint8(rng.IntN(256))
				if fill == "random" {
					x[i] = uint8(rng.IntN(256))
				}
			}
			b := make([]int32, c.m)
			for j := range b {
				b[j] = int32(rng.IntN(1000) - 500)
			}
			want, got := make([]int32, c.m), make([]int32, c.m)
			dotRowsU8(want, w, x, b)
			p := packRows(w, c.m, c.d)
			dotPacked(got, p, x, b)
			if !reflect.DeepEqual(got, want) {
				t.Fatalf("%d×%d %s: packed %v, plain %v", c.m, c.d, fill, got, want)
			}
			zero := make([]int32, c.m)
			wx, wy, gx, gy := make([]int32, c.m), make([]int32, c.m), make([]int32, c.m), make([]int32, c.m)
			dotRowsU8(wx, w, x, zero)
			dotRowsU8(wy, w, y, zero)
			dotPacked2(gx, gy, p, x, y)
			if !reflect.DeepEqual(gx, wx) || !reflect.DeepEqual(gy, wy) {
				t.Fatalf("%d×%d %s: two-input packed products differ from the plain ones", c.m, c.d, fill)
			}
			// This build's kernel (the SIMD one under GOEXPERIMENT=simd).
			a := newInt8Matrix(w, c.m, c.d)
			var buf []int16
			a.mulVec(got, x, b, &buf)
			if !reflect.DeepEqual(got, want) {
				t.Fatalf("%d×%d %s: kernel %v, plain %v", c.m, c.d, fill, got, want)
			}
			a.mulVec2(gx, gy, x, y, &buf)
			if !reflect.DeepEqual(gx, wx) || !reflect.DeepEqual(gy, wy) {
				t.Fatalf("%d×%d %s: two-input kernel products differ from the plain ones", c.m, c.d, fill)
			}
			// The batch kernel (column pairs under AVX2 or AVX-512), over 1 to 6
			// inputs so that every tile and remainder runs.
			a.usePairs(w, contiguousPairs(c.d))
			var pairs pairScratch
			for n := 1; n <= 6; n++ {
				xs := make([]uint8, n*c.d)
				for i := range xs {
					xs[i] = uint8(rng.IntN(256))
					if fill != "random" {
						xs[i] = 255
					}
				}
				want := make([]int32, n*c.m)
				for i := 0; i < n; i++ {
					dotRowsU8(want[i*c.m:(i+1)*c.m], w, xs[i*c.d:(i+1)*c.d], zero)
				}
				got := make([]int32, n*c.m)
				a.mulRows(got, xs, n, &buf, &pairs)
				if !reflect.DeepEqual(got, want) {
					t.Fatalf("%d×%d %s, %d inputs: batch kernel differs from the plain products", c.m, c.d, fill, n)
				}
			}
		}
	}
}

// dotRowsU8 is the plain reference of the packed products: it sets
// acc_j = Σ_i w_ji·x_i + b_j for the rows of w (len(acc) ×
// len(x)), accumulating in int32.
func dotRowsU8(acc []int32, w []int8, x []uint8, b []int32) {
	d := len(x)
	for j := range acc {
		row := w[j*d : (j+1)*d]
		row = row[:len(x)]
		var s0, s1, s2, s3 int32
		i := 0
		for ; i+4 <= len(x); i += 4 {
			s0 += int32(row[i]) * int32(x[i])
			s1 += int32(row[i+1]) * int32(x[i+1])
			s2 += int32(row[i+2]) * int32(x[i+2])
			s3 += int32(row[i+3]) * int32(x[i+3])
		}
		for ; i < len(x); i++ {
			s0 += int32(row[i]) * int32(x[i])
		}
		acc[j] = s0 + s1 + s2 + s3 + b[j]
	}
}

// TestRequantNormMatchesMulShift: the specialised requantisation gives the
// integers of the general one (mulShift, checked against math/big in
// TestFixedMulEq6) for every shift it accepts, at random and extreme
// products, signs and reciprocals.
func TestRequantNormMatchesMulShift(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 22))
	const k, nn = 40, 300
	mid := 0
	for trial := 0; trial < 200; trial++ {
		rq := make([]requantConst, k)
		acc := make([]int32, k)
		for j := range rq {
			rq[j] = requantConst{wsum: rng.Int64N(2*127*nn) - 127*nn, m0: 1<<30 + rng.Uint64N(1<<30), s: uint(1 + rng.IntN(63)),
				bpos: rng.Int64N(1<<24) - 1<<23, bneg: rng.Int64N(1<<24) - 1<<23}
			acc[j] = int32(rng.Int64N(2*255*127*nn) - 255*127*nn)
		}
		sum := rng.Int64N(255 * nn)
		recip := 1<<20 + rng.Uint64N(1<<34)
		if trial%10 == 0 {
			recip = 1<<62 - 1
		}
		fp, fn := make([]uint8, k), make([]uint8, k)
		requantNorm(fp, fn, acc, rq, nn, sum, recip)
		for j, a := range acc {
			c := rq[j]
			num := nn*int64(a) - sum*c.wsum
			hi, lo := bits.Mul64(absU(num), recip)
			zs := int64(min(hi<<34|lo>>30, satMax))
			if num < 0 {
				zs = -zs
			}
			tk := mulShift(zs, c.m0, int(c.s))
			if wp, wn := clampU8((tk+c.bpos+1<<15)>>16), clampU8((-tk+c.bneg+1<<15)>>16); fp[j] != wp || fn[j] != wn {
				t.Fatalf("trial %d template %d: specialised %d/%d, general %d/%d", trial, j, fp[j], fn[j], wp, wn)
			}
			for _, v := range []uint8{fp[j], fn[j]} {
				if v > 0 && v < 255 {
					mid++
				}
			}
		}
	}
	// The comparison means something only if codes off the clamps occur.
	t.Logf("%d codes inside (0, 255)", mid)
	if mid < 200 {
		t.Errorf("only %d of %d codes lie strictly inside (0, 255); the draws test little but the clamps", mid, 2*200*k)
	}
}

// A hidden unit whose weights training left negligible beside its bias
// (found in a full-scale MNIST head: a bias of 1.8e9 weight steps) is
// quantised with its scale raised to fit the bias, and still meets the
// rounding bound of TestQuantHeadMatchesFloat64Reference (half a step per
// weight and for the bias; Jacob et al. 2018, eq. 1-2).
func TestQuantHeadNegligibleWeights(t *testing.T) {
	hd, _, codes, sc, zp, n := quantHeadCase(t, HeadConfig{Kind: KindMLP, Hidden: 9, Epochs: 5})
	d := hd.d
	const j = 3
	for i := 0; i < d; i++ {
		hd.fw[j*d+i] *= 1e-12
	}
	hd.fb[j] = 0.5
	q, err := hd.Quantize(sc, zp, codes, n)
	if err != nil {
		t.Fatalf("a unit with negligible weights: %v", err)
	}
	if steps := float64(hd.fb[j]) / float64(q.s1[j]); steps > maxBiasSteps*(1+1e-6) {
		t.Fatalf("bias takes %g steps; want ≤ %d", steps, maxBiasSteps)
	}
	acc := make([]int32, len(q.s1))
	for r := 0; r < n; r++ {
		x := codes[r*d : (r+1)*d]
		q.layer1(acc, x, new([]int16))
		real, bound := float64(hd.fb[j]), float64(q.s1[j])/2
		for i := 0; i < d; i++ {
			dq := float64(int32(x[i]) - zp[i])
			real += float64(hd.fw[j*d+i]) * float64(sc[i]) * dq
			bound += float64(q.s1[j]) / 2 * math.Abs(dq)
		}
		if got := float64(q.s1[j]) * float64(acc[j]); math.Abs(got-real) > bound*(1+1e-6) {
			t.Fatalf("row %d: integer %g, float64 %g: off by %g > bound %g", r, got, real, math.Abs(got-real), bound)
		}
	}
}
