package learn

import (
	"math"
	"math/rand/v2"
	"os"
	"strconv"
	"testing"
	"time"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/v1layer"
)

// naturalSetup is the protocol of the Olshausen & Field (1996) check:
// 16×16 patches cut at random from the photos shipped with package
// datasets, each patch's mean removed, ZCA-whitened (ε as given, fitted on
// the training patches), a held-out set sampled with another seed.
type naturalSetup struct {
	Train, Held int
	Whiten      string  // "zca" (ε below) or "of": Olshausen & Field's (1997) R(f) filter on the photos (F0 below)
	F0          float64 // cut-off of the "of" filter, cycles/px
	Eps         float64
	Atoms       int
	Epochs      int
	Lambda      float64
}

type naturalResult struct {
	report        *BankReport
	kurtCode      float64
	kurtPix       float64
	heldObjective float64
	fit           time.Duration
	dict          *Dictionary
}

func runNatural(t *testing.T, ns naturalSetup) naturalResult {
	t.Helper()
	photos, err := datasets.Photos()
	if err != nil {
		t.Fatal(err)
	}
	border := 0
	if ns.Whiten == "of" {
		photos = datasets.WhitenPhotos(photos, ns.F0)
		border = 8 // the periodic filter's edge artefacts (datasets.WhitenImage)
	}
	tr, err := datasets.SamplePatches(photos, datasets.PatchConfig{Size: 16, Count: ns.Train, Seed: 1, Border: border})
	if err != nil {
		t.Fatal(err)
	}
	he, err := datasets.SamplePatches(photos, datasets.PatchConfig{Size: 16, Count: ns.Held, Seed: 2, Border: border})
	if err != nil {
		t.Fatal(err)
	}
	tr.RemoveMean()
	he.RemoveMean()
	if ns.Whiten == "of" {
		// Scale to unit pixel variance (Olshausen & Field fixed the image
		// variance likewise), so that λ has the same meaning as after ZCA.
		var ss float64
		for _, v := range tr.Pix {
			ss += float64(v) * float64(v)
		}
		s := float32(1 / math.Sqrt(ss/float64(len(tr.Pix))))
		for i := range tr.Pix {
			tr.Pix[i] *= s
		}
		for i := range he.Pix {
			he.Pix[i] *= s
		}
	} else {
		z, err := datasets.FitZCA(tr, ns.Eps)
		if err != nil {
			t.Fatal(err)
		}
		z.Apply(tr)
		z.Apply(he)
	}
	t0 := time.Now()
	d, err := DictConfig{Atoms: ns.Atoms, Lambda: ns.Lambda, Epochs: ns.Epochs, Seed: 1, Workers: 2}.Fit(tr.Pix, 256, nil)
	if err != nil {
		t.Fatal(err)
	}
	res := naturalResult{fit: time.Since(t0), dict: d}
	_, rep, err := LearnedBank(d, BankConfig{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	res.report = rep
	c, err := NewCoder(d, CoderConfig{Lambda: ns.Lambda, Solver: CD, Tol: 1e-6, Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	codes, st, err := c.Encode(nil, he.Pix, false)
	if err != nil {
		t.Fatal(err)
	}
	res.heldObjective = st.MeanObjective()
	res.kurtCode = kurtosis(codes)
	res.kurtPix = kurtosis(he.Pix)
	return res
}

// kurtosis returns the (non-excess) kurtosis E[(v−μ)⁴]/σ⁴, 3 for a Gaussian.
func kurtosis(v []float32) float64 {
	var m float64
	for _, x := range v {
		m += float64(x)
	}
	m /= float64(len(v))
	var m2, m4 float64
	for _, x := range v {
		d := float64(x) - m
		m2 += d * d
		m4 += d * d * d * d
	}
	m2 /= float64(len(v))
	m4 /= float64(len(v))
	return m4 / (m2 * m2)
}

func logNatural(t *testing.T, ns naturalSetup, r naturalResult) {
	rep := r.report
	t.Logf("setup %+v: fit %.1fs", ns, r.fit.Seconds())
	t.Logf("Gabor-like (R² ≥ %.1f): %d of %d = %.1f%%; median R² %.3f", GaborLikeR2, rep.GaborLike, len(rep.Fits), 100*rep.FracGaborLike, rep.MedianR2)
	t.Logf("orientation quadrants [0,45) [45,90) [90,135) [135,180): %v", rep.Quadrants)
	t.Logf("median SF bandwidth %.2f octaves; median orientation bandwidth %.1f°", rep.MedianFreqBandwidth, rep.MedianOrientationBandwidth)
	t.Logf("held-out: mean objective %.3f; kurtosis codes %.2f vs pixels %.2f (ratio %.2f)", r.heldObjective, r.kurtCode, r.kurtPix, r.kurtCode/r.kurtPix)
	t.Logf("quadrature pairs %d, unpaired %d", rep.Pairs, rep.Unpaired)
}

// checkNatural asserts figures from the literature and from a
// general-purpose library:
//   - ≥ 75% of atoms Gabor-like, R² ≥ 0.8: a target of ours, above the 62%
//     that scikit-learn 1.2.1's MiniBatchDictionaryLearning reaches on the
//     reference work's sparse-coding protocol (internal/benchwork's
//     peers.json, from that work's README §2);
//   - every orientation quadrant holds Gabor-like atoms (Olshausen & Field
//     1996: the basis tiles orientation);
//   - median spatial-frequency bandwidth 1.0–2.0 octaves (Foster, Gaska,
//     Nagler & Pollen 1985: mean ≈1.4 octaves in foveal macaque V1) and
//     median orientation bandwidth 30–50° (De Valois, Yund & Hepler 1982:
//     median ≈40°);
//   - coefficient kurtosis on held-out patches ≥ 3× that of the pixels
//     (sparse, heavy-tailed codes; Olshausen & Field 1996).
func checkNatural(t *testing.T, r naturalResult) {
	rep := r.report
	if rep.FracGaborLike < 0.75 {
		t.Errorf("%.1f%% Gabor-like atoms; want ≥ 75%%", 100*rep.FracGaborLike)
	}
	for q, n := range rep.Quadrants {
		if n == 0 {
			t.Errorf("no Gabor-like atom in orientation quadrant %d (%d–%d°)", q, 45*q, 45*q+45)
		}
	}
	if b := rep.MedianFreqBandwidth; !(b >= 1 && b <= 2) {
		t.Errorf("median SF bandwidth %.2f octaves; want 1.0–2.0", b)
	}
	if o := rep.MedianOrientationBandwidth; !(o >= 30 && o <= 50) {
		t.Errorf("median orientation bandwidth %.1f°; want 30–50°", o)
	}
	if ratio := r.kurtCode / r.kurtPix; !(ratio >= 3) {
		t.Errorf("code kurtosis %.2f is %.2f× the pixels' %.2f; want ≥ 3×", r.kurtCode, ratio, r.kurtPix)
	}
}

func envInt(name string, def int) int {
	if v, err := strconv.Atoi(os.Getenv(name)); err == nil {
		return v
	}
	return def
}

// TestLearnedBankPairs builds a dictionary from v1layer's hand-set Gabor
// kernels (15×15: even and odd phases at four orientations between the
// quadrant edges, plus a noise atom) and checks that LearnedBank recovers each kernel's parameters from
// the fit, pairs exactly the even/odd partners, leaves the noise atom
// unpaired, and produces a valid bank whose kernels are the atoms.
func TestLearnedBankPairs(t *testing.T) {
	const r = 7
	var w []float32
	var want []v1layer.GaborParams
	for o := 0; o < 4; o++ {
		for ph := 0; ph < 2; ph++ {
			p := v1layer.GaborParams{Theta: float64(o)*math.Pi/4 + math.Pi/8, Wavelength: 6, Phase: float64(ph) * math.Pi / 2, Sigma: 2.5, Aspect: 0.6}
			w = append(w, v1layer.GaborKernel(p, r).W...)
			want = append(want, p)
		}
	}
	rng := rand.New(rand.NewPCG(3, 3))
	for i := 0; i < (2*r+1)*(2*r+1); i++ {
		w = append(w, float32(rng.NormFloat64()))
	}
	d, err := NewDictionary(w, 9, (2*r+1)*(2*r+1))
	if err != nil {
		t.Fatal(err)
	}
	bank, rep, err := LearnedBank(d, BankConfig{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	if len(bank.Kernels) != 9 || bank.Kernels[0].Size != 2*r+1 {
		t.Fatalf("bank of %d kernels of size %d; want 9 of %d", len(bank.Kernels), bank.Kernels[0].Size, 2*r+1)
	}
	// v1layer makes its even kernels zero-mean by subtracting the
	// envelope times a constant, which the pure Gabor model cannot follow
	// exactly: lengths within 6%, R² ≥ 0.995 cover that; odd kernels are
	// exact Gabors.
	for i, p := range want {
		m := bank.Kernels[i].Meta
		if m.Kind != v1layer.KindLearned || angleDiff(m.Orientation, p.Theta) > 0.01 || math.Abs(m.Wavelength/p.Wavelength-1) > 0.06 ||
			math.Abs(m.Sigma/p.Sigma-1) > 0.06 || math.Abs(m.Aspect/p.Aspect-1) > 0.06 || m.FitR2 < 0.995 {
			t.Errorf("kernel %d meta %+v; want the parameters %+v", i, m, p)
		}
		if m.Pair != i^1 {
			t.Errorf("kernel %d paired with %d; want %d (its quadrature partner)", i, m.Pair, i^1)
		}
	}
	if bank.Kernels[8].Meta.Pair != -1 {
		t.Errorf("noise atom paired with %d; want -1", bank.Kernels[8].Meta.Pair)
	}
	if rep.Pairs != 4 || rep.Unpaired != 1 || rep.GaborLike != 8 || rep.Quadrants != [4]int{2, 2, 2, 2} {
		t.Errorf("report pairs %d unpaired %d Gabor-like %d quadrants %v; want 4, 1, 8, [2 2 2 2]", rep.Pairs, rep.Unpaired, rep.GaborLike, rep.Quadrants)
	}
	atom := d.Atom(nil, 3)
	if !sameBits(atom, bank.Kernels[3].W) {
		t.Error("odd-sized kernel differs from its atom")
	}
	// An even-sized (16×16) atom becomes a 17×17 kernel holding the same
	// weights, shifted toward the fitted centre.
	g := GaborFit{X0: 1.2, Y0: 0.8, Orientation: 0.3, Wavelength: 5, SigmaX: 2, SigmaY: 3, Amplitude: 1}
	d16, err := NewDictionary(g.Render(nil, 16), 1, 256)
	if err != nil {
		t.Fatal(err)
	}
	b16, _, err := LearnedBank(d16, BankConfig{})
	if err != nil {
		t.Fatal(err)
	}
	k := b16.Kernels[0]
	if k.Size != 17 {
		t.Fatalf("16×16 atom gave a %d×%d kernel; want 17×17", k.Size, k.Size)
	}
	// X0 > 0: no column shift; Y0 > 0 (up): shift down one row.
	a16 := d16.Atom(nil, 0)
	for row := 0; row < 16; row++ {
		if !sameBits(k.W[(row+1)*17:(row+1)*17+16], a16[row*16:(row+1)*16]) {
			t.Fatalf("kernel row %d is not atom row %d", row+1, row)
		}
	}
}

// naturalQuick is the CI version of the Olshausen & Field check: 192 atoms,
// the basis size Olshausen & Field (1996, Nature 381) learned from 16×16
// patches (from memory; 256 would be complete), from 40,000 patches of the
// photos whitened by Olshausen & Field's R(f) = f·exp(−(f/f0)⁴) filter with
// f0 = 0.25 cycles/px, λ = 2, 6 passes. These settings were chosen by
// trying ZCA (ε 1e-3 … 3e-2) and this filter (f0 0.25 … 0.4) at λ 0.5 … 2:
// ZCA at ε = 1e-3 leaves pixel noise in the atoms (15% Gabor-like after 2
// passes), larger ε gives clean but edge-like single-lobe atoms (92%
// Gabor-like, but SF bandwidth 3.1 octaves, orientation bandwidth 29°); the
// low-pass whitening filter gives atoms with 1–2 cycles.
var naturalQuick = naturalSetup{Train: 40000, Held: 5000, Whiten: "of", F0: 0.25, Atoms: 192, Epochs: 6, Lambda: 2}

// naturalLong is the STRIATE_LONG=1 run: 256 atoms, 80,000 patches, 8 passes.
var naturalLong = naturalSetup{Train: 80000, Held: 10000, Whiten: "of", F0: 0.25, Atoms: 256, Epochs: 8, Lambda: 2}

func TestNaturalImageAtoms(t *testing.T) {
	if testing.Short() {
		t.Skip("-short")
	}
	ns := naturalQuick
	if os.Getenv("STRIATE_LONG") == "1" {
		ns = naturalLong
	}
	r := runNatural(t, ns)
	logNatural(t, ns, r)
	checkNatural(t, r)
}
