package eval

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// meanPredictor is a test recognizer for two classes: class 1 when the
// image mean exceeds Threshold. Its probabilities are a logistic of the
// margin, so they are valid probability vectors.
type meanPredictor struct{ Threshold float64 }

func (meanPredictor) NumClasses() int { return 2 }

func (m meanPredictor) PredictBatch(imgs [][]float32, h, w, workers int) ([][]float32, error) {
	out := make([][]float32, len(imgs))
	for i, im := range imgs {
		if len(im) != h*w {
			return nil, fmt.Errorf("fake: image %d has %d pixels, want %d", i, len(im), h*w)
		}
		var s float64
		for _, v := range im {
			s += float64(v)
		}
		p1 := float32(1 / (1 + math.Exp(-50*(s/float64(len(im))-m.Threshold))))
		out[i] = []float32{1 - p1, p1}
	}
	return out, nil
}

// noiseP adds Gaussian noise of standard deviation Sigma (no clipping).
type noiseP struct{ Sigma float64 }

func (n noiseP) Apply(dst, src []float32, h, w int, seed uint64) {
	r := rand.New(rand.NewPCG(seed, 77))
	for i, v := range src {
		dst[i] = v + float32(n.Sigma*r.NormFloat64())
	}
}

func (n noiseP) String() string { return fmt.Sprintf("noise-%g", n.Sigma) }

// twoLevelData returns n images of h×w constant pixels, 0.5−delta for class
// 0 and 0.5+delta for class 1, alternating.
func twoLevelData(n, h, w int, delta float32) *Data {
	d := &Data{Name: "two-level", H: h, W: w, Classes: []string{"dark", "light"}}
	for i := range n {
		im := make([]float32, h*w)
		v := 0.5 - delta
		if i%2 == 1 {
			v = 0.5 + delta
		}
		for j := range im {
			im[j] = v
		}
		d.Images = append(d.Images, im)
		d.Labels = append(d.Labels, i%2)
	}
	return d
}

// centroidPredictor classifies by the nearest class mean image.
type centroidPredictor struct {
	means [][]float64
}

func (c *centroidPredictor) NumClasses() int { return len(c.means) }

func (c *centroidPredictor) PredictBatch(imgs [][]float32, h, w, workers int) ([][]float32, error) {
	out := make([][]float32, len(imgs))
	for i, im := range imgs {
		d := make([]float64, len(c.means))
		best := 0
		for k, m := range c.means {
			for j, v := range im {
				e := float64(v) - m[j]
				d[k] += e * e
			}
			if d[k] < d[best] {
				best = k
			}
		}
		p := make([]float32, len(c.means))
		p[best] = 1
		out[i] = p
	}
	return out, nil
}

// gaussData draws n images per class: class k's mean image has +mu at pixel
// k and 0 elsewhere, plus unit-variance Gaussian noise on every pixel.
func gaussData(nPerClass, k, pixels int, mu float64, seed uint64) *Data {
	r := rand.New(rand.NewPCG(seed, 3))
	d := &Data{Name: "gauss", H: 1, W: pixels}
	for c := range k {
		d.Classes = append(d.Classes, fmt.Sprintf("c%d", c))
	}
	for i := range nPerClass * k {
		c := i % k
		im := make([]float32, pixels)
		for j := range im {
			im[j] = float32(r.NormFloat64())
		}
		im[c] += float32(mu)
		d.Images = append(d.Images, im)
		d.Labels = append(d.Labels, c)
	}
	return d
}

func fitCentroids(train *Data, idx []int) *centroidPredictor {
	k := len(train.Classes)
	means := make([][]float64, k)
	counts := make([]int, k)
	for c := range means {
		means[c] = make([]float64, train.H*train.W)
	}
	for _, i := range idx {
		c := train.Labels[i]
		counts[c]++
		for j, v := range train.Images[i] {
			means[c][j] += float64(v)
		}
	}
	for c := range means {
		for j := range means[c] {
			means[c][j] /= float64(max(counts[c], 1))
		}
	}
	return &centroidPredictor{means}
}
