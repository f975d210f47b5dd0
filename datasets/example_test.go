package datasets_test

import (
	"fmt"

	"github.com/striate/striate/datasets"
)

// Perturbations have short names for reports and command-line flags.
func ExampleParsePerturbation() {
	for _, s := range []string{"noise-0.3", "shift-4-ne", "rot--15", "blur-1.5"} {
		p, err := datasets.ParsePerturbation(s)
		if err != nil {
			fmt.Println(err)
			continue
		}
		fmt.Printf("%-10s kind=%v level=%g dir=%d\n", p, p.Kind, p.Level, p.Dir)
	}
	// Output:
	// noise-0.3  kind=noise level=0.3 dir=0
	// shift-4-ne kind=shift level=4 dir=1
	// rot--15    kind=rot level=-15 dir=0
	// blur-1.5   kind=blur level=1.5 dir=0
}

// A stratified split keeps each class's share in both parts.
func ExampleStratifiedSplit() {
	labels := []int{0, 0, 0, 0, 0, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1}
	train, test := datasets.StratifiedSplit(labels, 0.2, 1)
	count := func(idx []int) [2]int {
		var c [2]int
		for _, i := range idx {
			c[labels[i]]++
		}
		return c
	}
	fmt.Println("train per class:", count(train), "test per class:", count(test))
	// Output:
	// train per class: [4 8] test per class: [1 2]
}

// Streaming a set in batches of float32 pixels.
func ExampleSet_Batches() {
	s := &datasets.Set{Name: "tiny", N: 5, H: 2, W: 2, Pix: make([]uint8, 20), Labels: []int{0, 1, 0, 1, 0}, Classes: []string{"a", "b"}}
	for i := range s.Pix {
		s.Pix[i] = uint8(i * 10)
	}
	for b := range s.Batches(datasets.BatchConfig{Size: 2}) {
		fmt.Println(b.N, b.Index, b.Labels, b.Images[0])
	}
	// Output:
	// 2 [0 1] [0 1] [0 0.039215688 0.078431375 0.11764706]
	// 2 [2 3] [0 1] [0.3137255 0.3529412 0.39215687 0.43137255]
	// 1 [4] [0] [0.627451 0.6666667 0.7058824 0.74509805]
}
