package benchwork

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/striate/striate/datasets"
)

// sharedDir is the shared reference folder the embedded files were copied
// from, when this machine has it (STRIATE_BENCH_DIR overrides); the tests
// that compare against it skip otherwise.
func sharedDir(t *testing.T) string {
	t.Helper()
	for _, d := range []string{os.Getenv("STRIATE_BENCH_DIR"), "/work/shared/bench", filepath.Join("..", "..", "..", "shared", "bench")} {
		if d == "" {
			continue
		}
		if _, err := os.Stat(filepath.Join(d, "filterbank.json")); err == nil {
			return d
		}
	}
	t.Skip("shared reference folder not found (set STRIATE_BENCH_DIR)")
	return ""
}

func sum256(b []byte) string {
	s := sha256.Sum256(b)
	return hex.EncodeToString(s[:])
}

// The embedded specification and kernels are byte copies of the shared
// reference work's files; these are the SHA-256 sums of the originals
// (recorded in data/README.md).
func TestEmbeddedChecksums(t *testing.T) {
	for name, want := range map[string]string{
		"filterbank.json":         "69dd6d020e5cff86a2f41034a9180009315bd3c7235334017b1717423dae65e4",
		"filterbank_kernels.json": "b23d8ac7ab4b7c85670a04b4ed0977b2ce82320a445a0b86d5b850200d428425",
	} {
		b, _, err := ReadFile("", name)
		if err != nil {
			t.Fatal(err)
		}
		if got := sum256(b); got != want {
			t.Errorf("%s: sha256 %s, want %s", name, got, want)
		}
	}
}

// The specification states 18 distinct kernels (2 DoG of 11×11 and 21×21,
// 16 Gabor of 15×15 and 29×29), 12 output maps, and 9,090 MACs per pixel
// for direct correlation — the sum of the kernels' taps.
func TestEmbeddedSpec(t *testing.T) {
	b, _, err := ReadFile("", "filterbank.json")
	if err != nil {
		t.Fatal(err)
	}
	var spec struct {
		Kernels []struct {
			Name string `json:"name"`
			Size int    `json:"size"`
		} `json:"kernels"`
		Outputs []struct {
			Name string `json:"name"`
		} `json:"output_channels"`
		Ops struct {
			MACs int `json:"macs_per_pixel_unique_kernels"`
		} `json:"op_count"`
	}
	if err := json.Unmarshal(b, &spec); err != nil {
		t.Fatal(err)
	}
	if len(spec.Outputs) != 12 {
		t.Errorf("%d output maps, want 12", len(spec.Outputs))
	}
	ks, err := Kernels("")
	if err != nil {
		t.Fatal(err)
	}
	if len(ks) != 18 || len(spec.Kernels) != 18 {
		t.Fatalf("%d kernels (%d in the specification), want 18", len(ks), len(spec.Kernels))
	}
	sizes := map[int]int{}
	taps := 0
	seen := map[string]bool{}
	for i, k := range ks {
		if k.Name != spec.Kernels[i].Name || k.Size != spec.Kernels[i].Size {
			t.Errorf("kernel %d: %s %d×%d, the specification says %s %d", i, k.Name, k.Size, k.Size, spec.Kernels[i].Name, spec.Kernels[i].Size)
		}
		sizes[k.Size]++
		taps += k.Size * k.Size
		seen[k.Name] = true
	}
	if len(seen) != 18 || sizes[11] != 1 || sizes[21] != 1 || sizes[15] != 8 || sizes[29] != 8 {
		t.Errorf("kernel names %d distinct, sizes %v; want 18 names, one 11 and one 21, eight each of 15 and 29", len(seen), sizes)
	}
	if taps != 9090 || spec.Ops.MACs != 9090 {
		t.Errorf("taps %d, specification %d MACs per pixel; want 9,090", taps, spec.Ops.MACs)
	}
}

// The embedded kernels follow the published formulas the specification
// states: a difference of Gaussians (σs = 1.6 σc, each Gaussian normalised
// over the square support of radius ceil(3σs), then unit L2), and Gabor
// pairs with the bandwidth–σ relation σ = λ/π·sqrt(ln2/2)·(2^b+1)/(2^b−1)
// (Petkov 1995, b = 1 octave gives 0.5622 λ), radius ceil(3σ), the even
// part made zero-sum, each unit L2.
func TestEmbeddedKernelsFollowFormulas(t *testing.T) {
	ks, err := Kernels("")
	if err != nil {
		t.Fatal(err)
	}
	byName := map[string]Kernel{}
	for _, k := range ks {
		byName[k.Name] = k
	}
	check := func(name string, want []float64) {
		t.Helper()
		k := byName[name]
		if len(k.W) != len(want) {
			t.Fatalf("%s: %d values, want %d", name, len(k.W), len(want))
		}
		var worst float64
		for i := range want {
			worst = math.Max(worst, math.Abs(k.W[i]-want[i]))
		}
		if worst > 1e-12 {
			t.Errorf("%s: max |difference| from the formula %.3g, want ≤ 1e-12", name, worst)
		}
	}
	unit := func(w []float64) []float64 {
		var n float64
		for _, v := range w {
			n += v * v
		}
		n = math.Sqrt(n)
		for i := range w {
			w[i] /= n
		}
		return w
	}
	for _, sc := range []float64{1, 2} {
		ss := 1.6 * sc
		r := int(math.Ceil(3 * ss))
		s := 2*r + 1
		gc, gs := make([]float64, s*s), make([]float64, s*s)
		var nc, ns float64
		for v := -r; v <= r; v++ {
			for u := -r; u <= r; u++ {
				d2 := float64(u*u + v*v)
				i := (v+r)*s + u + r
				gc[i], gs[i] = math.Exp(-d2/(2*sc*sc)), math.Exp(-d2/(2*ss*ss))
				nc += gc[i]
				ns += gs[i]
			}
		}
		k := make([]float64, s*s)
		for i := range k {
			k[i] = gc[i]/nc - gs[i]/ns
		}
		check("dog_on_sc"+strconv.Itoa(int(sc)), unit(k))
	}
	const b = 1.0
	for _, lam := range []float64{4, 8} {
		sigma := lam / math.Pi * math.Sqrt(math.Ln2/2) * (math.Pow(2, b) + 1) / (math.Pow(2, b) - 1)
		if math.Abs(sigma/lam-0.5622) > 5e-5 {
			t.Fatalf("σ/λ = %.5f, want 0.5622 for a 1-octave bandwidth", sigma/lam)
		}
		r := int(math.Ceil(3 * sigma))
		s := 2*r + 1
		for _, deg := range []int{0, 45, 90, 135} {
			th := float64(deg) * math.Pi / 180
			env, cs, sn := make([]float64, s*s), make([]float64, s*s), make([]float64, s*s)
			var se, sec float64
			for v := -r; v <= r; v++ {
				for u := -r; u <= r; u++ {
					i := (v+r)*s + u + r
					x := float64(u)*math.Cos(th) - float64(v)*math.Sin(th)
					env[i] = math.Exp(-float64(u*u+v*v) / (2 * sigma * sigma))
					cs[i] = math.Cos(2 * math.Pi * x / lam)
					sn[i] = env[i] * math.Sin(2*math.Pi*x/lam)
					se += env[i]
					sec += env[i] * cs[i]
				}
			}
			c := sec / se
			even := make([]float64, s*s)
			for i := range even {
				even[i] = env[i] * (cs[i] - c)
			}
			name := "gabor_l" + strconv.Itoa(int(lam)) + "_t" + strconv.Itoa(deg)
			check(name+"_even", unit(even))
			check(name+"_odd", unit(sn))
		}
	}
}

// The embedded PNG holds 64 crops of 256×256 in one 2048×2048 grey image
// (the reference work's layout), and every crop is, byte for byte, the
// window of the scikit-image photograph that data/crops256.json names
// (the photos package datasets embeds).
func TestEmbeddedCropsArePhotoWindows(t *testing.T) {
	s, err := Crops("", 0)
	if err != nil {
		t.Fatal(err)
	}
	if len(s.Images) != 64 || s.H != 256 || s.W != 256 {
		t.Fatalf("%d crops of %d×%d, want 64 of 256×256", len(s.Images), s.H, s.W)
	}
	b, _, err := ReadFile("", "crops256.json")
	if err != nil {
		t.Fatal(err)
	}
	var doc struct {
		Crops []struct {
			I      int    `json:"i"`
			Image  string `json:"image"`
			Y0, X0 int
			From   string `json:"from"`
		} `json:"crops"`
	}
	if err := json.Unmarshal(b, &doc); err != nil {
		t.Fatal(err)
	}
	photos, err := datasets.Photos()
	if err != nil {
		t.Fatal(err)
	}
	byName := map[string]datasets.Photo{}
	for _, p := range photos {
		byName[p.Name+".png"] = p
	}
	if len(doc.Crops) != 64 {
		t.Fatalf("crops256.json lists %d crops, want 64", len(doc.Crops))
	}
	reused := 0
	for _, c := range doc.Crops {
		p, ok := byName[c.Image]
		if !ok {
			t.Fatalf("crop %d: photo %s is not embedded in datasets", c.I, c.Image)
		}
		if c.From == "reference" {
			reused++
		}
		img := s.Images[c.I]
		for y := 0; y < 256; y++ {
			for x := 0; x < 256; x++ {
				if img[y*256+x] != p.Pix[(c.Y0+y)*p.W+c.X0+x] {
					t.Fatalf("crop %d differs from %s at (%d,%d)+(%d,%d)", c.I, c.Image, c.Y0, c.X0, y, x)
				}
			}
		}
	}
	if reused != 53 {
		t.Errorf("%d crops kept from the reference, want 53 (the 11 of the unlicensed motorcycle photos replaced)", reused)
	}
	if s2, err := Crops("", 2); err != nil || len(s2.Images) != 2 {
		t.Errorf("Crops(\"\", 2): %v", err)
	}
}

// The 53 kept crops equal the shared reference PNG's tiles, when that
// folder is on this machine.
func TestEmbeddedCropsMatchShared(t *testing.T) {
	dir := sharedDir(t)
	ref, err := Crops(dir, 0)
	if err != nil {
		t.Fatal(err)
	}
	got, err := Crops("", 0)
	if err != nil {
		t.Fatal(err)
	}
	differ := 0
	for i := range got.Images {
		for j := range got.Images[i] {
			if got.Images[i][j] != ref.Images[i][j] {
				differ++
				break
			}
		}
	}
	if differ != 11 {
		t.Errorf("%d tiles differ from the shared PNG, want 11 (crops 8, 9, 19, 20, 30, 31, 41, 42, 52, 53, 63)", differ)
	}
}

// The embedded peer figures: PyTorch 1.13 conv2d at 6,486 / 10,124 MNIST
// img/s and PyTorch FFT at 108 on 256×256 with one thread (the reference
// work's front-end table); every figure names its library and version.
func TestEmbeddedPeers(t *testing.T) {
	peers, err := Peers("")
	if err != nil {
		t.Fatal(err)
	}
	if len(peers) != 5 {
		t.Errorf("%d front-end peers, want 5", len(peers))
	}
	p, v := Fastest(peers, 28, 2)
	if v != 10124 || !strings.HasPrefix(p.Name, "PyTorch 1.13 conv2d") {
		t.Errorf("fastest 2-thread MNIST peer = %q at %g, want PyTorch 1.13 conv2d at 10124", p.Name, v)
	}
	if p, v := Fastest(peers, 28, 1); v != 6486 || !strings.HasPrefix(p.Name, "PyTorch 1.13 conv2d") {
		t.Errorf("fastest 1-thread MNIST peer = %q at %g, want PyTorch 1.13 conv2d at 6486", p.Name, v)
	}
	if p, v := Fastest(peers, 256, 1); v != 108 || !strings.HasPrefix(p.Name, "PyTorch 1.13 FFT") {
		t.Errorf("fastest 1-thread 256×256 peer = %q at %g, want PyTorch 1.13 FFT at 108", p.Name, v)
	}
	figs, src, err := Figures()
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(src, "2-core") {
		t.Errorf("source %q does not name the machine", src)
	}
	sections := map[string]int{}
	for _, f := range figs {
		sections[f.Section]++
		if f.Library == "" || f.Version == "" || f.Unit == "" || f.Value <= 0 || (f.High != 0 && f.High < f.Value) {
			t.Errorf("figure %+v lacks a library, version, unit or value", f)
		}
	}
	if sections["frontend"] != 18 || sections["sparse"] != 8 || sections["classifier"] != 3 {
		t.Errorf("figures per section %v, want 18 front end, 8 sparse coding, 3 classifier", sections)
	}
}

// The hand-copied front-end figures equal the table of the shared
// reference README, when that folder is on this machine; the folder also
// works as an override of every loader.
func TestSharedFolderOverride(t *testing.T) {
	dir := sharedDir(t)
	if d, err := FindDir(dir); err != nil || d != dir {
		t.Fatalf("FindDir(%s) = %q, %v", dir, d, err)
	}
	want, err := Peers(dir)
	if err != nil {
		t.Fatal(err)
	}
	got, err := Peers("")
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != len(want) {
		t.Fatalf("%d embedded peers, %d in %s/README.md", len(got), len(want), dir)
	}
	for i := range want {
		g, w := got[i], want[i]
		if g.MNIST1 != w.MNIST1 || g.MNIST2 != w.MNIST2 || g.Big1 != w.Big1 || g.Big2 != w.Big2 {
			t.Errorf("peer %d: embedded %+v, README %+v", i, g, w)
		}
	}
	ks, err := Kernels(dir)
	if err != nil || len(ks) != 18 {
		t.Fatalf("Kernels(%s): %d, %v", dir, len(ks), err)
	}
}

func TestFindDir(t *testing.T) {
	if d, err := FindDir(""); err != nil || d != "" {
		t.Errorf("FindDir(\"\") = %q, %v; want the embedded work (\"\", nil)", d, err)
	}
	_, err := FindDir(t.TempDir())
	if err == nil || !strings.Contains(err.Error(), "filterbank.json") {
		t.Errorf("FindDir accepted a folder without filterbank.json (err %v)", err)
	}
	if _, _, err := ReadFile("", "nope.json"); err == nil {
		t.Error("ReadFile of a file the embedded work lacks gave no error")
	}
}

// MNIST reads the 10,000 MNIST test images (28×28, pixel/255) when the
// data set is on this machine.
func TestMNISTTestSet(t *testing.T) {
	s := MNIST(0)
	if strings.HasPrefix(s.Source, "random") {
		t.Skipf("MNIST unavailable: %s", s.Source)
	}
	if len(s.Images) != 10000 || len(s.Images[0]) != 28*28 {
		t.Fatalf("%d images of %d pixels, want the 10,000 test images of 784", len(s.Images), len(s.Images[0]))
	}
}
