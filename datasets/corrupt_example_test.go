package datasets_test

import (
	"fmt"

	"github.com/striate/striate/datasets"
)

// A garment-sorting station checks its recogniser on corrupted copies of a
// test set: parse the condition from a flag, then corrupt every image with
// its own seed.
func ExampleParseCorruption() {
	c, err := datasets.ParseCorruption("fog-5")
	fmt.Println(c, err)
	c, _ = datasets.ParseCorruption("spatter")
	fmt.Println(c, "(the published severity)")
	_, err = datasets.ParseCorruption("frost-2")
	fmt.Println(err)

	belt := &datasets.Set{Name: "belt", N: 2, H: 28, W: 28, Pix: make([]uint8, 2*28*28), Labels: []int{0, 1}, Classes: []string{"shirt", "trouser"}}
	spattered, err := belt.Perturbed(c, datasets.SuiteSeed, 0)
	fmt.Println(spattered.Name, spattered.N, err)
	// Output:
	// fog-5 <nil>
	// spatter-3 (the published severity)
	// datasets: corruption "frost-2": unknown name "frost"; valid names are shot_noise, impulse_noise, glass_blur, motion_blur, shear, scale, rotate, brightness, translate, stripe, fog, spatter, dotted_line, zigzag, canny_edges, optionally followed by -1…5, the severity
	// belt (spatter-3) 2 <nil>
}
