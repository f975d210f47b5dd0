package v1layer

import (
	"math"
	"math/rand/v2"
	"testing"
)

// correlateDirect writes the correlation of the padded image pad (row
// stride pw, border R) with the size×size kernel k to dst (h×w):
//
//	dst(y,x) = Σ_v Σ_u k[v][u]·img(y+v−r, x+u−r)
//
// as scalar row AXPYs over pre-padded rows: the reference the engine's
// direct path (one horizontal pass per kernel row, SIMD in a SIMD build) is
// checked against.
func correlateDirect(dst, pad []float32, pw, h, w, R int, k []float32, size int) {
	r := size / 2
	off := R - r
	for y := 0; y < h; y++ {
		out := dst[y*w : y*w+w]
		clear(out)
		for v := 0; v < size; v++ {
			row := pad[(y+off+v)*pw+off:]
			for u := 0; u < size; u++ {
				c := k[v*size+u]
				if c == 0 {
					continue
				}
				in := row[u : u+w]
				for x := range out {
					out[x] += c * in[x]
				}
			}
		}
	}
}

// The engine's path for kernels with no separable plan (full-rank learned
// atoms: one horizontal pass per kernel row, run by the SIMD loops in a
// GOEXPERIMENT=simd build) equals the scalar row-AXPY correlation, for odd
// and even widths around the 8-lane blocks and both borders. Tolerance:
// 1e-6 of Σ|k|·max|img| per pixel — the two differ only in summation order
// and fused vs separate rounding (float32 epsilon 6e-8 per term).
func TestDirectMatchesScalar(t *testing.T) {
	t.Logf("build: %s", Build())
	rng := rand.New(rand.NewPCG(21, 22))
	var ks []Kernel
	for _, size := range []int{9, 9, 9, 7, 11} {
		k := Kernel{Size: size, W: make([]float32, size*size)}
		for i := range k.W {
			k.W[i] = float32(rng.NormFloat64() * 0.1)
		}
		ks = append(ks, k)
	}
	R := 5
	e := newEngine(ks, R)
	for i, kp := range e.p.ks {
		if !kp.direct {
			t.Fatalf("random kernel %d planned as separable", i)
		}
	}
	for _, b := range []Border{BorderZero, BorderReflect} {
		for _, hw := range [][2]int{{11, 11}, {23, 30}, {28, 28}, {17, 57}, {40, 65}} {
			h, w := hw[0], hw[1]
			img, _ := randImage(rng, h, w)
			s := e.scratchFor(nil, h, w)
			resp := make([][]float32, len(ks))
			for i := range resp {
				resp[i] = make([]float32, respLen(h, w))
			}
			e.responses(resp, img, h, w, b, s)
			want := make([]float32, h*w)
			for i, k := range ks {
				correlateDirect(want, s.pad, s.pw, h, w, R, k.W, k.Size)
				var l1 float64
				for _, v := range k.W {
					l1 += math.Abs(float64(v))
				}
				for j := range want {
					if d := math.Abs(float64(resp[i][j] - want[j])); d > 1e-6*l1 {
						t.Fatalf("%s %dx%d kernel %d (%d×%d): pixel %d = %g, scalar %g", b, h, w, i, k.Size, k.Size, j, resp[i][j], want[j])
					}
				}
			}
		}
	}
}
