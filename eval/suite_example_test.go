package eval_test

import (
	"fmt"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/eval"
)

// brightness calls an image "light" when its mean grey level exceeds 0.3.
type brightness struct{}

func (brightness) NumClasses() int { return 2 }

func (brightness) PredictBatch(imgs [][]float32, h, w, workers int) ([][]float32, error) {
	out := make([][]float32, len(imgs))
	for i, im := range imgs {
		var s float32
		for _, v := range im {
			s += v
		}
		if s/float32(len(im)) > 0.3 {
			out[i] = []float32{0, 1}
		} else {
			out[i] = []float32{1, 0}
		}
	}
	return out, nil
}

// Scoring a recognizer on the 15 MNIST-C corruptions at the published
// severity: a brightness rule tells dark from light items until a
// corruption changes the overall brightness (shrinking a uniform image
// pads it with black, so the light items read as dark).
func ExampleScoreSuite() {
	test := &datasets.Set{Name: "belt-test", N: 20, H: 16, W: 16, Pix: make([]uint8, 20*16*16),
		Labels: make([]int, 20), Classes: []string{"dark", "light"}}
	for i := range test.N {
		grey := uint8(40)
		if i%2 == 1 {
			grey = 150
		}
		for j := range 256 {
			test.Pix[i*256+j] = grey
		}
		test.Labels[i] = i % 2
	}
	suite, err := datasets.MNISTCSuite(datasets.PublishedSeverity)
	if err != nil {
		fmt.Println(err)
		return
	}
	r, err := eval.ScoreSuite("brightness", brightness{}, test, suite, eval.SuiteConfig{})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("clean %.0f%%, mean corruption accuracy %.0f%% over %d kinds\n", 100*r.Clean.Accuracy, 100*r.MeanCorruption, r.CorruptionKinds)
	fmt.Printf("worst kind: %s at %.0f%%\n", r.Worst.Kind, 100*r.Worst.Accuracy)
	// Output:
	// clean 100%, mean corruption accuracy 85% over 15 kinds
	// worst kind: scale at 50%
}
