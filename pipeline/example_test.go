package pipeline_test

import (
	"fmt"
	"image"
	"image/color"
	"math"
	"os"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/learn"
	"github.com/striate/striate/pipeline"
)

// stripes draws a 28×28 grating: horizontal bars (class 0) or vertical bars
// (class 1) of period 6 px with the given phase, as a garment-sorting station
// might see ribbed versus pin-striped fabric.
func stripes(vertical bool, phase float64) []uint8 {
	px := make([]uint8, 28*28)
	for y := 0; y < 28; y++ {
		for x := 0; x < 28; x++ {
			t := float64(y)
			if vertical {
				t = float64(x)
			}
			px[y*28+x] = uint8(127.5 + 127.5*math.Cos(2*math.Pi*t/6+phase))
		}
	}
	return px
}

func stripeSet() *datasets.Set {
	s := &datasets.Set{Name: "stripes", H: 28, W: 28, Classes: []string{"horizontal", "vertical"}}
	for i := 0; i < 40; i++ {
		s.Pix = append(s.Pix, stripes(i%2 == 1, float64(i)*0.7)...)
		s.Labels = append(s.Labels, i%2)
		s.N++
	}
	return s
}

// Fit a small pipeline, then use it as a feature extractor and a classifier
// on an image of another size and colour model.
func Example() {
	cfg := pipeline.Config{
		Templates: []learn.TemplateConfig{}, // no template layer
		Pool:      pipeline.PoolConfig{Size: 7},
		Head:      learn.HeadConfig{Kind: learn.KindSoftmax, Epochs: 20, Schedule: learn.ScheduleConstant, ValFrac: -1},
		Seed:      1,
	}
	m, err := pipeline.Fit(cfg, stripeSet(), pipeline.FitOptions{Workers: 2})
	if err != nil {
		fmt.Println(err)
		return
	}
	// A 40×56 (w×h) purple RGBA image of vertical bars of period 8.6 px:
	// resized to 28×28 grey, its bars have a period of about 6 px.
	img := image.NewRGBA(image.Rect(0, 0, 40, 56))
	for y := 0; y < 56; y++ {
		for x := 0; x < 40; x++ {
			v := uint8(127.5 + 127.5*math.Cos(2*math.Pi*float64(x)/8.6))
			img.Set(x, y, color.RGBA{v, v / 2, v, 255})
		}
	}
	feat := m.Extract(img)
	class, _ := m.Predict(img)
	fmt.Println("features:", len(feat), "=", m.FeatureLen())
	fmt.Println("class:", m.Classes()[class])
	// Output:
	// features: 48 = 48
	// class: vertical
}

// Load a fitted model and use it as a feature extractor: the vector Extract
// returns can feed any other classifier or a nearest-neighbour index.
func ExampleLoadFile() {
	m, err := pipeline.LoadFile("../testdata/pipeline/small.stm")
	if err != nil {
		fmt.Println(err)
		return
	}
	// The first MNIST test digit, stored as 28×28 bytes.
	px, err := os.ReadFile("../testdata/pipeline/digits32.u8")
	if err != nil {
		fmt.Println(err)
		return
	}
	img := image.NewGray(image.Rect(0, 0, 28, 28))
	copy(img.Pix, px[:28*28])

	feat := m.Extract(img)
	class, probs := m.Predict(img)
	fmt.Println("classes:", m.NumClasses())
	fmt.Println("feature length:", len(feat), len(feat) == m.FeatureLen())
	fmt.Printf("digit: %s (p = %.2f)\n", m.Classes()[class], probs[class])
	// Output:
	// classes: 10
	// feature length: 710 true
	// digit: 7 (p = 0.99)
}

// A preset is the default pipeline with the settings that depend on what
// the images show; start from one and change what you need.
func ExamplePreset() {
	cfg, err := pipeline.Preset("garments")
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(pipeline.PresetNames())
	fmt.Println(cfg.Mirror, cfg.Pool.Sqrt, cfg.Input.Upright)
	cfg.Seed = 42 // then pipeline.Fit(cfg, trainingSet, pipeline.FitOptions{Workers: 2})
	// Output:
	// [default digits garments]
	// true true vertical
}
