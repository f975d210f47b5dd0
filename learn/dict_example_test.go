package learn_test

import (
	"fmt"

	"github.com/striate/striate/learn"
)

// With orthonormal atoms the Lasso code is the soft-thresholded
// correlation, sign(c)·max(|c| − λ, 0) (Tibshirani 1996, §2.2).
func ExampleCoder_Encode() {
	d, err := learn.NewDictionary([]float32{
		1, 0, 0,
		0, 1, 0,
		0, 0, 1,
	}, 3, 3)
	if err != nil {
		panic(err)
	}
	c, err := learn.NewCoder(d, learn.CoderConfig{Lambda: 0.5, Solver: learn.FISTA})
	if err != nil {
		panic(err)
	}
	codes, st, err := c.Encode(nil, []float32{2, -0.25, -1.5}, false)
	if err != nil {
		panic(err)
	}
	fmt.Printf("%.4f %d\n", codes, st.NonZeros)
	// Output: [1.5000 0.0000 -1.0000] 2
}
