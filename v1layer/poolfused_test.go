package v1layer

import (
	"math/rand/v2"
	"testing"
)

// The fused pooling path gives exactly the maps of the unfused one (full
// rectified / energy maps, then maxPool): max commutes with max(0,·),
// negation and the correctly rounded, non-decreasing float32 sqrt, so the
// tolerance is zero. Covered: the default front end (energy + DoG on/off),
// scale pooling, the linear and rectified modes, a signed DoG, and an
// unpaired learned-style bank; odd and even sizes.
func TestFusedPoolMatchesUnfused(t *testing.T) {
	rng := rand.New(rand.NewPCG(31, 32))
	bank := &Bank{}
	for i := 0; i < 2; i++ {
		k := Kernel{Size: 7, W: make([]float32, 49), Meta: Channel{Kind: KindLearned, Pair: -1}}
		for j := range k.W {
			k.W[j] = float32(rng.NormFloat64() * 0.1)
		}
		bank.Kernels = append(bank.Kernels, k)
	}
	cfgs := map[string]Config{
		"default":   {},
		"scales":    {Pool: PoolConfig{Scales: true}},
		"linear":    {Complex: ComplexConfig{Mode: "linear"}, DoG: DoGConfig{Signed: true}},
		"rectified": {Complex: ComplexConfig{Mode: "rectified"}, Gabor: GaborConfig{Phases: 4}},
		"learned":   {Gabor: GaborConfig{Disable: true}, Bank: bank},
	}
	for name, cfg := range cfgs {
		f, err := New(cfg)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if !f.fused {
			t.Fatalf("%s: front end not on the fused path", name)
		}
		for _, hw := range [][2]int{{28, 28}, {30, 31}, {33, 40}} {
			h, w := hw[0], hw[1]
			img, _ := randImage(rng, h, w)
			var a, b Maps
			f.Apply(&a, img, h, w)
			f.fused = false
			f.Apply(&b, img, h, w)
			f.fused = true
			for i := range a.Pix {
				if a.Pix[i] != b.Pix[i] {
					t.Fatalf("%s %dx%d: element %d fused %g, unfused %g", name, h, w, i, a.Pix[i], b.Pix[i])
				}
			}
		}
	}
	// Stages that need whole maps turn the fused path off.
	for _, cfg := range []Config{
		{DoG: DoGConfig{LCN: LCNConfig{Enabled: true}}},
		{Complex: ComplexConfig{Norm: NormConfig{Enabled: true}}},
		{Pool: PoolConfig{Size: 5}},
	} {
		f, err := New(cfg)
		if err != nil {
			t.Fatal(err)
		}
		if f.fused {
			t.Errorf("config %+v took the fused path", cfg)
		}
	}
}
