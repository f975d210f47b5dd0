package v1layer

import (
	"math"
	"testing"
)

// drawBar adds a bar of length l and width wd (px) centred on (cx, cy),
// its long axis at angle th (radians, image y up, counter-clockwise from
// +x), at grey value v, with 4×4 supersampled edges.
func drawBar(img []float32, h, w int, cx, cy, l, wd, th float64, v float32) {
	c, s := math.Cos(th), math.Sin(th)
	r := int(math.Ceil(l/2+wd/2)) + 1
	for y := int(cy) - r; y <= int(cy)+r; y++ {
		for x := int(cx) - r; x <= int(cx)+r; x++ {
			if y < 0 || y >= h || x < 0 || x >= w {
				continue
			}
			hits := 0
			for sy := 0; sy < 4; sy++ {
				for sx := 0; sx < 4; sx++ {
					dx := float64(x) + (float64(sx)+0.5)/4 - 0.5 - cx
					dy := -(float64(y) + (float64(sy)+0.5)/4 - 0.5 - cy)
					a := dx*c + dy*s
					b := -dx*s + dy*c
					if math.Abs(a) <= l/2 && math.Abs(b) <= wd/2 {
						hits++
					}
				}
			}
			if hits > 0 {
				img[y*w+x] = max(img[y*w+x], v*float32(hits)/16)
			}
		}
	}
}

// The pyramid's reduce and expand steps equal SciPy 1.10.1's
// scipy.ndimage.correlate1d (binomial [1 5 10 10 5 1]/32, mode "reflect",
// origin −1, every second sample) and map_coordinates (order 1, mode
// "nearest") on seeded random maps: testdata/v1layer/saliency_scipy.json.gz,
// made by gen_saliency.py there. Tolerance 1e-6: float32 sums of at most
// 12 products of values ≤ 1 with weights summing to 1 round at ~2e-7.
func TestSaliencyPyramidMatchesSciPy(t *testing.T) {
	ref := loadSalRef(t)
	const tol = 1e-6
	for _, c := range ref.Reduce {
		in := f32s64(c.In)
		out := make([]float32, halve(c.H)*halve(c.W))
		pyrReduce(out, in, c.H, c.W, make([]float32, c.H*halve(c.W)))
		if d := maxAbsDiff(out, c.Out); d > tol {
			t.Errorf("reduce %d×%d: max |Δ| = %.3g vs scipy %s, want ≤ %g", c.H, c.W, d, ref.Versions["scipy"], tol)
		}
	}
	for _, c := range ref.Expand {
		in := f32s64(c.In)
		out := make([]float32, c.H*c.W)
		side := max(c.H, c.W)
		wk := &salWork{tmp: make([]float32, c.SH*c.W), idx: make([]int32, side), wt: make([]float32, side)}
		pyrExpand(out, c.H, c.W, in, c.SH, c.SW, c.D, wk)
		if d := maxAbsDiff(out, c.Out); d > tol {
			t.Errorf("expand %d×%d by %d levels to %d×%d: max |Δ| = %.3g vs scipy, want ≤ %g", c.SH, c.SW, c.D, c.H, c.W, d, tol)
		}
	}
}

type salRef struct {
	Versions map[string]string `json:"versions"`
	Reduce   []struct {
		H, W    int
		In, Out []float64
	} `json:"reduce"`
	Expand []struct {
		SH, SW, D, H, W int
		In, Out         []float64
	} `json:"expand"`
	Norm []struct {
		H, W    int
		MinPeak float64 `json:"min_peak"`
		Peaks   int
		In, Out []float64
	} `json:"norm"`
}

func loadSalRef(t *testing.T) *salRef {
	var ref salRef
	readGz(t, "saliency_scipy.json.gz", &ref)
	if len(ref.Reduce) == 0 || len(ref.Expand) == 0 || len(ref.Norm) == 0 {
		t.Fatal("saliency_scipy.json.gz: empty reference")
	}
	return &ref
}

func f32s64(x []float64) []float32 {
	out := make([]float32, len(x))
	for i, v := range x {
		out[i] = float32(v)
	}
	return out
}

// N(·) on small maps, values worked by hand from the operator of Itti,
// Koch & Niebur (1998, §2.2): scale to [0, M] (M = 1), m̄ = mean of the
// local maxima other than the global one (those ≥ MinPeak·M), multiply by
// (M − m̄)². One isolated peak keeps the whole range; equal peaks cancel.
func TestSaliencyNormHandWorked(t *testing.T) {
	type pt struct {
		y, x int
		v    float32
	}
	cases := []struct {
		name    string
		h, w    int
		in, out []pt // out lists every non-zero output value
	}{
		{"one peak keeps its range", 5, 5, []pt{{2, 2, 4}}, []pt{{2, 2, 1}}},
		// M = 4 → values 1 and 0.5; m̄ = 0.5; (1 − 0.5)² = 0.25.
		{"peaks 4 and 2", 5, 5, []pt{{1, 1, 4}, {3, 3, 2}}, []pt{{1, 1, 0.25}, {3, 3, 0.125}}},
		// m̄ = 1: (1 − 1)² = 0, both vanish.
		{"two equal peaks", 5, 7, []pt{{1, 1, 3}, {3, 5, 3}}, nil},
		// M = 10 → 1, 0.5, 0.3 and 0.05; 0.05 < MinPeak 0.1 does not count:
		// m̄ = (0.5+0.3)/2 = 0.4, (1 − 0.4)² = 0.36.
		{"three peaks and a ripple", 7, 7, []pt{{0, 0, 10}, {0, 6, 5}, {6, 0, 3}, {6, 6, 0.5}},
			[]pt{{0, 0, 0.36}, {0, 6, 0.18}, {6, 0, 0.108}, {6, 6, 0.018}}},
		// An equal adjacent pair is one maximum (plateau), not two.
		{"plateau pair", 5, 6, []pt{{2, 2, 8}, {2, 3, 8}, {0, 5, 2}}, []pt{{2, 2, 0.5625}, {2, 3, 0.5625}, {0, 5, 0.140625}}},
		// A peak's shoulder is not a maximum: 4 with neighbour 3, and 2 far off:
		// m̄ = 0.5 as in "peaks 4 and 2".
		{"shoulder", 5, 7, []pt{{1, 1, 4}, {1, 2, 3}, {3, 5, 2}}, []pt{{1, 1, 0.25}, {1, 2, 0.1875}, {3, 5, 0.125}}},
		// Rounding-sized maps are cleared, not stretched.
		{"below the floor", 4, 4, []pt{{1, 1, 1e-7}}, nil},
	}
	// Tolerance 1e-7: one float64 product rounded to float32 (≤ 6e-8 for values ≤ 1).
	const tol = 1e-7
	for _, c := range cases {
		m := make([]float32, c.h*c.w)
		for _, p := range c.in {
			m[p.y*c.w+p.x] = p.v
		}
		salNorm(m, c.h, c.w, 0.1, salFeatureFloor)
		want := make([]float32, c.h*c.w)
		for _, p := range c.out {
			want[p.y*c.w+p.x] = p.v
		}
		for i := range m {
			if math.Abs(float64(m[i]-want[i])) > tol {
				t.Errorf("%s: N at (%d,%d) = %g, want %g", c.name, i/c.w, i%c.w, m[i], want[i])
			}
		}
	}
}

// N(·) equals an independent NumPy/SciPy implementation (local maxima from
// scipy.ndimage.maximum_filter) on smoothed random maps with no ties,
// testdata/v1layer/saliency_scipy.json.gz. Tolerance 2e-7: the output is
// one float64 product per value rounded to float32, values ≤ 1.
func TestSaliencyNormMatchesSciPy(t *testing.T) {
	ref := loadSalRef(t)
	const tol = 2e-7
	for i, c := range ref.Norm {
		m := f32s64(c.In)
		salNorm(m, c.H, c.W, c.MinPeak, salFeatureFloor)
		if d := maxAbsDiff(m, c.Out); d > tol {
			t.Errorf("norm case %d (%d×%d, %d peaks): max |Δ| = %.3g vs scipy, want ≤ %g", i, c.H, c.W, c.Peaks, d, tol)
		}
	}
}
