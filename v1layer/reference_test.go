package v1layer

import (
	"github.com/striate/striate/internal/raster"

	"compress/gzip"
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"testing"
)

// refCorrelate is the float64 direct correlation used as ground truth:
// out(y,x) = Σ_v Σ_u k[v][u]·img(y+v−r, x+u−r), zero or reflect border.
func refCorrelate(img []float64, h, w int, k []float64, size int, b Border) []float64 {
	r := size / 2
	out := make([]float64, h*w)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			var s float64
			for v := 0; v < size; v++ {
				yy := y + v - r
				if yy < 0 || yy >= h {
					if b != BorderReflect {
						continue
					}
					yy = raster.Reflect(yy, h)
				}
				for u := 0; u < size; u++ {
					xx := x + u - r
					if xx < 0 || xx >= w {
						if b != BorderReflect {
							continue
						}
						xx = raster.Reflect(xx, w)
					}
					s += k[v*size+u] * img[yy*w+xx]
				}
			}
			out[y*w+x] = s
		}
	}
	return out
}

// refPool is the 3×3-style max pool of the definition in filterbank.json.
func refPool(m []float64, h, w, size, s int) []float64 {
	r := size / 2
	oh, ow := (h+s-1)/s, (w+s-1)/s
	out := make([]float64, oh*ow)
	for i := 0; i < oh; i++ {
		for j := 0; j < ow; j++ {
			best := math.Inf(-1)
			for y := i*s - r; y <= i*s+r; y++ {
				for x := j*s - r; x <= j*s+r; x++ {
					if y >= 0 && y < h && x >= 0 && x < w {
						best = math.Max(best, m[y*w+x])
					}
				}
			}
			out[i*ow+j] = best
		}
	}
	return out
}

// refFrontEnd computes the default front end (reference work) in float64
// from float64 kernels (bench order: 2 DoG, then 16 Gabor).
func refFrontEnd(img []float64, h, w int, ks [][]float64, sizes []int, b Border) [][]float64 {
	resp := make([][]float64, len(ks))
	for i := range ks {
		resp[i] = refCorrelate(img, h, w, ks[i], sizes[i], b)
	}
	var maps [][]float64
	for i := 0; i < 2; i++ {
		on, off := make([]float64, h*w), make([]float64, h*w)
		for j, v := range resp[i] {
			on[j], off[j] = math.Max(v, 0), math.Max(-v, 0)
		}
		maps = append(maps, on, off)
	}
	for i := 2; i < len(ks); i += 2 {
		e := make([]float64, h*w)
		for j := range e {
			e[j] = math.Hypot(resp[i][j], resp[i+1][j])
		}
		maps = append(maps, e)
	}
	for i := range maps {
		maps[i] = refPool(maps[i], h, w, 3, 2)
	}
	return maps
}

type benchKernels struct {
	Kernels []struct {
		Name   string      `json:"name"`
		Size   int         `json:"size"`
		Values [][]float64 `json:"values"`
	} `json:"kernels"`
}

// loadBenchKernels reads testdata/v1layer/bench_kernels.json.gz, a gzip of
// ../shared/bench/filterbank_kernels.json (the reference work's kernels,
// float64, computed by the bench authors with numpy from the formulas in
// filterbank.json).
func loadBenchKernels(t testing.TB) (ks [][]float64, sizes []int, names []string) {
	f, err := os.Open("../testdata/v1layer/bench_kernels.json.gz")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	zr, err := gzip.NewReader(f)
	if err != nil {
		t.Fatal(err)
	}
	var bk benchKernels
	if err := json.NewDecoder(zr).Decode(&bk); err != nil {
		t.Fatal(err)
	}
	for _, k := range bk.Kernels {
		flat := make([]float64, 0, k.Size*k.Size)
		for _, row := range k.Values {
			flat = append(flat, row...)
		}
		ks = append(ks, flat)
		sizes = append(sizes, k.Size)
		names = append(names, k.Name)
	}
	return ks, sizes, names
}

func randImage(rng *rand.Rand, h, w int) ([]float32, []float64) {
	f32 := make([]float32, h*w)
	f64 := make([]float64, h*w)
	for i := range f32 {
		v := float32(rng.IntN(256)) / 255
		f32[i], f64[i] = v, float64(v)
	}
	return f32, f64
}
