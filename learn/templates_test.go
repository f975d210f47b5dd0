package learn

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"sync"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/striate/striate/v1layer"
)

// kmeansRef is testdata/learn/head/kmeans.json (gen_kmeans.py, scikit-learn 1.2.1).
type kmeansRef struct {
	Source        string
	N, D, K       int
	Iters         int
	X, Init       []float64
	After1, After []float64
}

func TestSphericalKMeansMatchesSklearn(t *testing.T) {
	raw, err := os.ReadFile("../testdata/learn/head/kmeans.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref kmeansRef
	if err := json.Unmarshal(raw, &ref); err != nil {
		t.Fatal(err)
	}
	f32 := func(s []float64) []float32 {
		out := make([]float32, len(s))
		for i, v := range s {
			out[i] = float32(v)
		}
		return out
	}
	X, init := f32(ref.X), f32(ref.Init)
	// kmeansTol: our iteration runs in float32 (Gemm for the cosines, float64
	// sums for the means), scikit-learn's in float64; with the same
	// assignments the centroids differ by float32 rounding of unit vectors
	// (~1e-7). 1e-5 leaves margin; a single point assigned differently moves
	// a centroid by ~1/80 here, far above it.
	const kmeansTol = 1e-5
	for _, c := range []struct {
		iters int
		want  []float64
	}{{1, ref.After1}, {ref.Iters, ref.After}} {
		res := sphericalKMeans(X, ref.N, ref.D, ref.K, c.iters, init, rand.New(rand.NewPCG(1, 1)), nil, nil)
		if res.empty != 0 {
			t.Errorf("%d iterations: %d empty clusters (scikit-learn had none)", c.iters, res.empty)
		}
		worst := 0.0
		for i, v := range res.centroids {
			worst = math.Max(worst, math.Abs(float64(v)-c.want[i]))
		}
		t.Logf("%d iterations vs %s: max |Δ| %.2g", c.iters, ref.Source, worst)
		if worst > kmeansTol {
			t.Errorf("%d iterations: centroids differ from scikit-learn by %.3g > %g", c.iters, worst, kmeansTol)
		}
	}
}

// randomMaps returns n C×h×w maps of sparse non-negative blobs, a stand-in for
// complex-cell energy maps.
func randomMaps(n, C, h, w int, seed uint64) []v1layer.Maps {
	rng := rand.New(rand.NewPCG(seed, 5))
	out := make([]v1layer.Maps, n)
	for i := range out {
		out[i].Resize(C, h, w)
		clear(out[i].Pix)
		for b := 0; b < 6; b++ {
			c, y, x := rng.IntN(C), rng.IntN(h-2), rng.IntN(w-2)
			a := float32(rng.Float64() + 0.2)
			for dy := 0; dy < 3; dy++ {
				for dx := 0; dx < 3; dx++ {
					out[i].Pix[(c*h+y+dy)*w+x+dx] += a * float32(1+dy*dx%2)
				}
			}
		}
		for j := range out[i].Pix {
			out[i].Pix[j] += float32(0.05 * rng.Float64())
		}
	}
	return out
}

func fitTemplates(t *testing.T, cfg TemplateConfig, maps []v1layer.Maps) *Templates {
	t.Helper()
	tm, _, err := cfg.Fit(maps, nil)
	if err != nil {
		t.Fatal(err)
	}
	return tm
}

// TestTemplatePoolingIgnoresSmallShifts: a small pattern on a blank map,
// shifted by less than its distance to the cell border, leaves the pooled
// features unchanged (max pooling exactly; average pooling up to float32
// rounding of the cell sums, shiftTol). Blank patches all encode alike, so
// only the pattern's footprint (p+2 positions wide) matters. Common practice:
// the reason pooling is used (e.g. Boureau, Ponce & LeCun 2010).
func TestTemplatePoolingIgnoresSmallShifts(t *testing.T) {
	const shiftTol = 1e-6
	maps := randomMaps(60, 3, 16, 16, 1)
	for _, cfg := range []TemplateConfig{
		{K: 12, PatchSize: 5, Patches: 3000, Grids: []int{1, 2}, Pool: PoolMax, Seed: 3},
		{K: 12, PatchSize: 5, Patches: 3000, Grids: []int{1, 2}, Pool: PoolAvg, Seed: 3},
		{K: 12, PatchSize: 5, Patches: 3000, Grids: []int{2}, Encoder: EncodeTriangle, Seed: 3},
	} {
		tm := fitTemplates(t, cfg, maps)
		// 24×24 maps, p = 5 → 20×20 positions, 2×2 grid cells of 10×10
		// positions. A 3×3 blob at rows/cols 5..7 touches positions 1..7;
		// shifted by up to 2 it touches at most 3..9, still inside cell 0.
		mk := func(dy, dx int) *v1layer.Maps {
			var m v1layer.Maps
			m.Resize(3, 24, 24)
			clear(m.Pix)
			for c := 0; c < 3; c++ {
				for y := 0; y < 3; y++ {
					for x := 0; x < 3; x++ {
						m.Pix[(c*24+5+dy+y)*24+5+dx+x] = float32(1 + c + y*x)
					}
				}
			}
			return &m
		}
		base := tm.Encode(nil, mk(0, 0))
		for _, s := range [][2]int{{1, 0}, {0, 2}, {2, 1}} {
			got := tm.Encode(nil, mk(s[0], s[1]))
			for i := range base {
				if math.Abs(float64(got[i]-base[i])) > shiftTol*math.Max(1, math.Abs(float64(base[i]))) {
					t.Fatalf("%s/%s: shift %v changes feature %d: %g → %g", cfg.Encoder, cfg.Pool, s, i, base[i], got[i])
				}
			}
		}
		// Control: a shift that carries the blob into another cell does change them.
		far := tm.Encode(nil, mk(10, 10))
		diff := false
		for i := range base {
			if far[i] != base[i] {
				diff = true
			}
		}
		if !diff {
			t.Errorf("%s/%s: a shift across cells left the features unchanged; the test cannot detect anything", cfg.Encoder, cfg.Pool)
		}
	}
}

// TestTemplateEncodesItselfBest: the input-space pre-image of template k
// (the patch x with W(x − μ) = t_k, so normalisation is off here) responds
// most to template k, with response exactly t_k·t_k = 1 before the
// threshold: the fold of whitening into filters and the patch indexing are
// consistent. Cauchy-Schwarz: t_j·t_k < 1 for distinct unit vectors.
func TestTemplateEncodesItselfBest(t *testing.T) {
	maps := randomMaps(60, 2, 12, 12, 2)
	for _, enc := range []string{EncodeSoft, EncodeTriangle} {
		cfg := TemplateConfig{K: 10, PatchSize: 4, Patches: 3000, NormEps: -1, Grids: []int{1}, Encoder: enc, Seed: 4, Alpha: -1}
		tm := fitTemplates(t, cfg, maps)
		dim := tm.dim
		W := mat.NewDense(dim, dim, nil)
		for i := 0; i < dim; i++ {
			for j := 0; j < dim; j++ {
				W.Set(i, j, float64(tm.whiten[i*dim+j]))
			}
		}
		var lu mat.LU
		lu.Factorize(W)
		for k := 0; k < tm.K(); k++ {
			tk := mat.NewVecDense(dim, nil)
			for j := 0; j < dim; j++ {
				tk.SetVec(j, float64(tm.cent[k*dim+j]))
			}
			var v mat.VecDense
			if err := lu.SolveVecTo(&v, false, tk); err != nil {
				t.Fatal(err)
			}
			var m v1layer.Maps
			m.Resize(2, 4, 4)
			for j := 0; j < dim; j++ {
				m.Pix[j] = float32(v.AtVec(j)) + tm.mean[j] // patch index = map index for a p×p map
			}
			f := tm.Encode(nil, &m)
			best := 0
			for j := 0; j < tm.K(); j++ {
				if f[j] > f[best] {
					best = j
				}
			}
			if best != k {
				t.Errorf("%s: pre-image of template %d activates template %d most (%g vs %g)", enc, k, best, f[best], f[k])
			}
			// selfTol: float32 solve and whitening of a unit vector, ~1e-4 relative.
			const selfTol = 1e-3
			if enc == EncodeSoft && math.Abs(float64(f[k])-1) > selfTol {
				t.Errorf("template %d: self-response %g, want 1 (unit-norm template)", k, f[k])
			}
		}
	}
}

func TestTemplatesTensorsRoundTripAndConcurrent(t *testing.T) {
	maps := randomMaps(40, 3, 14, 14, 3)
	cfg := TemplateConfig{K: 8, PatchSize: 5, Patches: 2000, Grids: []int{1, 2}, Scales: []float64{1, 0.8}, Seed: 5}
	tm := fitTemplates(t, cfg, maps)
	back, err := NewTemplatesFromTensors(tm.Config(), tm.Tensors())
	if err != nil {
		t.Fatal(err)
	}
	n, err := tm.OutLen(3, 14, 14)
	if err != nil {
		t.Fatal(err)
	}
	if n != 2*8*(1+4) {
		t.Errorf("OutLen %d, want 2K·(1+4) = %d", n, 2*8*5)
	}
	want := make([][]float32, len(maps))
	for i := range maps {
		want[i] = tm.Encode(nil, &maps[i])
		if got := back.Encode(nil, &maps[i]); !sameF32(got, want[i]) {
			t.Fatalf("map %d: encoding changed after the tensor round trip", i)
		}
	}
	var wg sync.WaitGroup
	for g := 0; g < 6; g++ {
		wg.Add(1)
		go func(g int) {
			defer wg.Done()
			var dst []float32
			for i := range maps {
				dst = tm.Encode(dst, &maps[(i+g)%len(maps)])
				if !sameF32(dst, want[(i+g)%len(maps)]) {
					t.Error("concurrent Encode differs")
					return
				}
			}
		}(g)
	}
	wg.Wait()
	// Scale pooling is a max over scales: never below the scale-1 features.
	one := cfg
	one.Scales = nil
	t1, err := NewTemplatesFromTensors(one, tm.Tensors())
	if err != nil {
		t.Fatal(err)
	}
	for i := range maps {
		f1 := t1.Encode(nil, &maps[i])
		for j, v := range f1 {
			if want[i][j] < v {
				t.Fatalf("scale-pooled feature %d = %g below the scale-1 value %g", j, want[i][j], v)
			}
		}
	}
	// Same seed, same templates; the fit is deterministic.
	again := fitTemplates(t, cfg, maps)
	if !sameTensors(again.Tensors(), tm.Tensors()) {
		t.Error("two fits with the same seed differ")
	}
	bad := tm.Tensors()
	bad[2].Shape = []int{9, 3, 5, 5}
	if _, err := NewTemplatesFromTensors(tm.Config(), bad); err == nil {
		t.Error("wrong centroid shape accepted")
	}
}

func sameF32(a, b []float32) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Float32bits(a[i]) != math.Float32bits(b[i]) {
			return false
		}
	}
	return true
}

func TestTemplatesStackAndSparse(t *testing.T) {
	maps := randomMaps(30, 2, 16, 16, 6)
	l1 := fitTemplates(t, TemplateConfig{K: 6, PatchSize: 3, Patches: 2000, MapPool: 2, Seed: 1}, maps)
	mid := make([]v1layer.Maps, len(maps))
	for i := range maps {
		l1.EncodeMaps(&mid[i], &maps[i])
	}
	if mid[0].C != 12 || mid[0].H != 7 || mid[0].W != 7 {
		t.Fatalf("EncodeMaps shape %d×%d×%d, want 12×7×7", mid[0].C, mid[0].H, mid[0].W)
	}
	l2 := fitTemplates(t, TemplateConfig{K: 5, PatchSize: 3, Patches: 1000, Grids: []int{2}, Seed: 2}, mid)
	if n, err := l2.OutLen(12, 7, 7); err != nil || n != 2*5*4 {
		t.Errorf("stacked OutLen %d, %v", n, err)
	}
	if f := l2.Encode(nil, &mid[0]); len(f) != 40 {
		t.Errorf("stacked Encode length %d", len(f))
	}
	sp := fitTemplates(t, TemplateConfig{Method: MethodSparse, K: 6, PatchSize: 3, Patches: 600, Sparse: &DictConfig{Epochs: 2}, Seed: 1}, maps)
	for k := 0; k < sp.K(); k++ {
		var s float64
		for _, v := range sp.Template(nil, k) {
			s += float64(v) * float64(v)
		}
		if math.Abs(s-1) > 1e-4 {
			t.Errorf("sparse template %d has squared norm %g, want 1", k, s)
		}
	}
}

func TestTemplateConfigJSON(t *testing.T) {
	c := TemplateConfig{Method: MethodSparse, K: 32, Grids: []int{1, 2}, Scales: []float64{1, 0.7}, Sparse: &DictConfig{Lambda: 0.5}, Seed: 3}
	b, err := json.Marshal(c)
	if err != nil {
		t.Fatal(err)
	}
	var back TemplateConfig
	if err := json.Unmarshal(b, &back); err != nil {
		t.Fatal(err)
	}
	b2, _ := json.Marshal(back)
	if string(b) != string(b2) || back.Sparse == nil || back.Sparse.Lambda != 0.5 {
		t.Errorf("round trip: %s → %s", b, b2)
	}
	for _, c := range []TemplateConfig{{}, {NormEps: -1, WhitenEps: -2, Alpha: -1}, c} {
		r, err := c.resolved()
		if err != nil {
			t.Fatal(err)
		}
		rr, err := r.resolved()
		if err != nil {
			t.Fatal(err)
		}
		b1, _ := json.Marshal(r)
		b2, _ := json.Marshal(rr)
		if string(b1) != string(b2) {
			t.Errorf("resolving twice changes the config: %s → %s", b1, b2)
		}
	}
	if b, _ := json.Marshal(TemplateConfig{}); string(b) != "{}" {
		t.Errorf("zero config marshals to %s, want {}", b)
	}
}

func TestTemplateConfigErrors(t *testing.T) {
	maps := randomMaps(5, 2, 8, 8, 7)
	for _, c := range []TemplateConfig{{Method: "pca"}, {K: -1}, {PatchSize: 9}, {Encoder: "relu"}, {Pool: "median"},
		{Grids: []int{0}}, {Scales: []float64{10}}, {K: 100, Patches: 50}, {PatchSize: 3, Grids: []int{7}}} {
		tm, _, err := c.Fit(maps, nil)
		if err == nil {
			if _, err = tm.OutLen(2, 8, 8); err == nil {
				t.Errorf("%+v accepted", c)
			}
		}
	}
	other := randomMaps(1, 3, 8, 8, 8)
	if _, _, err := (TemplateConfig{}).Fit(append(maps, other...), nil); err == nil {
		t.Error("mixed channel counts accepted")
	}
	tm := fitTemplates(t, TemplateConfig{K: 4, PatchSize: 3, Patches: 100}, maps)
	if _, err := tm.OutLen(3, 8, 8); err == nil {
		t.Error("OutLen accepted the wrong channel count")
	}
}

// TestTemplateEncodeMatchesFormula checks Encode's fused path (moments from
// integral images, scale and offset applied to the responses) against the
// encoder written out patch by patch in float64 as in Coates, Lee & Ng
// (2011): x̂ = (x − mean x)/sqrt(var x + ε), r_k = F_k·(x̂ − μ), soft features
// max(0, r − α) and max(0, −r − α), max-pooled on a 2×2 grid and over the
// whole map. encodeTol: float32 im2col GEMM over dim = 75 terms of O(1)
// values against float64, well under 1e-4 of the largest response.
func TestTemplateEncodeMatchesFormula(t *testing.T) {
	maps := randomMaps(40, 3, 11, 13, 7)
	for _, stride := range []int{1, 2} {
		cfg := TemplateConfig{K: 6, PatchSize: 5, Patches: 2000, Grids: []int{1, 2}, Pool: PoolMax, Stride: stride, Seed: 3}
		tm := fitTemplates(t, cfg, maps)
		m := &maps[39]
		got := tm.Encode(nil, m)
		oh, ow := tm.positions(m.H, m.W)
		k, dim, p := tm.K(), tm.dim, tm.p
		F := 2 * k
		feat := make([]float64, oh*ow*F)
		x := make([]float64, dim)
		for y := 0; y < oh; y++ {
			for xx := 0; xx < ow; xx++ {
				i := 0
				var s float64
				for c := 0; c < m.C; c++ {
					for dy := 0; dy < p; dy++ {
						for dx := 0; dx < p; dx++ {
							x[i] = float64(m.Pix[(c*m.H+y*stride+dy)*m.W+xx*stride+dx])
							s += x[i]
							i++
						}
					}
				}
				mean := s / float64(dim)
				var q float64
				for _, v := range x {
					q += (v - mean) * (v - mean)
				}
				inv := 1 / math.Sqrt(q/float64(dim)+float64(tm.normEps))
				for kk := 0; kk < k; kk++ {
					var r float64
					for j, v := range x {
						r += float64(tm.filt[kk*dim+j]) * ((v-mean)*inv - float64(tm.mean[j]))
					}
					a := float64(tm.alpha)
					feat[(y*ow+xx)*F+kk] = math.Max(0, r-a)
					feat[(y*ow+xx)*F+k+kk] = math.Max(0, -r-a)
				}
			}
		}
		var want []float64
		for _, g := range []int{1, 2} {
			for f := 0; f < F; f++ {
				for gy := 0; gy < g; gy++ {
					for gx := 0; gx < g; gx++ {
						v := math.Inf(-1)
						for y := gy * oh / g; y < (gy+1)*oh/g; y++ {
							for xx := gx * ow / g; xx < (gx+1)*ow/g; xx++ {
								v = math.Max(v, feat[(y*ow+xx)*F+f])
							}
						}
						want = append(want, v)
					}
				}
			}
		}
		if len(got) != len(want) {
			t.Fatalf("stride %d: %d features, want %d", stride, len(got), len(want))
		}
		var top float64
		for _, v := range want {
			top = math.Max(top, v)
		}
		if top == 0 {
			t.Fatalf("stride %d: all reference features are zero; the check would be empty", stride)
		}
		const encodeTol = 1e-4
		for i := range want {
			if d := math.Abs(float64(got[i]) - want[i]); d > encodeTol*top {
				t.Fatalf("stride %d: feature %d = %g, formula %g (|Δ| %.3g > %.0e·%g)", stride, i, got[i], want[i], d, encodeTol, top)
			}
		}
	}
}

// TestWhiteningIsZCA checks fitWhitening against the definition of ZCA
// whitening (Bell & Sejnowski 1997, Vision Res. 37:3327-3338): W is the
// symmetric inverse square root of the regularised covariance, so W must be
// symmetric and W·(C + εI)·W = I, with C the covariance computed here in
// float64 directly from its definition and ε = eps·(mean eigenvalue) =
// eps·trace(C)/dim. zcaTol: W is stored in float32 and C's blocks are
// summed in float32 (~1e-6 relative each); over a condition number of about
// 1/eps = 10 that stays well below 1e-4.
func TestWhiteningIsZCA(t *testing.T) {
	const n, dim, eps = 3000, 40, 0.1
	rng := rand.New(rand.NewPCG(11, 12))
	X := make([]float32, n*dim)
	for i := 0; i < n; i++ {
		// Correlated columns: a random walk along the row plus noise.
		var w float64
		for j := 0; j < dim; j++ {
			w += rng.NormFloat64()
			X[i*dim+j] = float32(0.3*w + rng.NormFloat64() + 2)
		}
	}
	mean, W, err := fitWhitening(X, n, dim, eps, nil)
	if err != nil {
		t.Fatal(err)
	}
	mu := make([]float64, dim)
	for i := 0; i < n; i++ {
		for j := 0; j < dim; j++ {
			mu[j] += float64(X[i*dim+j]) / n
		}
	}
	C := make([]float64, dim*dim)
	for i := 0; i < n; i++ {
		for a := 0; a < dim; a++ {
			da := float64(X[i*dim+a]) - mu[a]
			for b := 0; b < dim; b++ {
				C[a*dim+b] += da * (float64(X[i*dim+b]) - mu[b]) / n
			}
		}
	}
	var tr float64
	for a := 0; a < dim; a++ {
		if d := math.Abs(float64(mean[a]) - mu[a]); d > 1e-5 {
			t.Fatalf("mean[%d] = %g, want %g", a, mean[a], mu[a])
		}
		tr += C[a*dim+a]
	}
	e := eps * tr / dim
	const zcaTol = 1e-4
	for a := 0; a < dim; a++ {
		for b := 0; b < dim; b++ {
			if W[a*dim+b] != W[b*dim+a] {
				t.Fatalf("W not symmetric at (%d,%d)", a, b)
			}
		}
	}
	// M = W·(C+εI), then M·W.
	M := make([]float64, dim*dim)
	for a := 0; a < dim; a++ {
		for j := 0; j < dim; j++ {
			var s float64
			for i := 0; i < dim; i++ {
				c := C[i*dim+j]
				if i == j {
					c += e
				}
				s += float64(W[a*dim+i]) * c
			}
			M[a*dim+j] = s
		}
	}
	for a := 0; a < dim; a++ {
		for b := 0; b < dim; b++ {
			var s float64
			for j := 0; j < dim; j++ {
				s += M[a*dim+j] * float64(W[j*dim+b])
			}
			want := 0.0
			if a == b {
				want = 1
			}
			if math.Abs(s-want) > zcaTol {
				t.Fatalf("(W(C+εI)W)[%d,%d] = %.6g, want %g (tol %g)", a, b, s, want, zcaTol)
			}
		}
	}
}

// TestTemplateFitWorkersBitIdentical: the whitening, the k-means steps and
// the soft threshold's responses run in units of rows or columns whose
// sums keep the one-goroutine order, so 1, 2 and 3 workers give the same
// templates and k-means objectives bit for bit (with 3,000 patches: three
// row blocks of the assignment and covariance, the last one short).
func TestTemplateFitWorkersBitIdentical(t *testing.T) {
	maps := randomMaps(30, 3, 14, 14, 11)
	cfg := TemplateConfig{K: 12, PatchSize: 5, Patches: 3000, Iters: 4, Seed: 9}
	ref, refRep, err := cfg.FitWith(maps, TemplateFitOptions{Workers: 1})
	if err != nil {
		t.Fatal(err)
	}
	for _, w := range []int{2, 3} {
		tm, rep, err := cfg.FitWith(maps, TemplateFitOptions{Workers: w})
		if err != nil {
			t.Fatal(err)
		}
		want, got := ref.Tensors(), tm.Tensors()
		if len(got) != len(want) {
			t.Fatalf("%d workers: %d tensors, want %d", w, len(got), len(want))
		}
		for i := range want {
			if !sameF32(got[i].Data, want[i].Data) {
				t.Errorf("%d workers: tensor %q differs from 1 worker's", w, want[i].Name)
			}
		}
		for i, v := range refRep.Objective {
			if math.Float64bits(rep.Objective[i]) != math.Float64bits(v) {
				t.Errorf("%d workers: k-means objective of iteration %d is %v, 1 worker's %v", w, i+1, rep.Objective[i], v)
			}
		}
	}
}
