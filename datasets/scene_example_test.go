package datasets_test

import (
	"fmt"

	"github.com/striate/striate/datasets"
)

// Scenes for a garment-sorting belt: items of one split at random places
// and sizes on a textured belt with lint, each with its class and box.
// The same seed and index always give the same frame.
func ExampleSceneBuilder() {
	// A stand-in split of three 28×28 "garments": bright squares of growing size.
	split := &datasets.Set{Name: "demo", N: 3, H: 28, W: 28, Pix: make([]uint8, 3*784),
		Labels: []int{0, 1, 2}, Classes: []string{"shirt", "trouser", "sandal"}}
	for i := range 3 {
		for y := 8 - 2*i; y < 20+2*i; y++ {
			for x := 8 - 2*i; x < 20+2*i; x++ {
				split.Pix[i*784+y*28+x] = 230
			}
		}
	}
	b, err := datasets.NewSceneBuilder(split, datasets.SceneConfig{W: 96, H: 64, MaxItems: 3, Background: datasets.Texture, Lint: 2, Seed: 7})
	if err != nil {
		fmt.Println(err)
		return
	}
	s := b.Scene(nil, 0)
	fmt.Printf("%d×%d frame, %d items\n", s.W, s.H, len(s.Items))
	for _, it := range s.Items {
		fmt.Printf("%-7s box %v (%d×%d px)\n", split.Classes[it.Class], it.Box, it.Width(), it.Height())
	}
	// Output:
	// 96×64 frame, 2 items
	// sandal  box [18 14 44 40] (26×26 px)
	// shirt   box [78 8 88 18] (10×10 px)
}

// The cluttered translated MNIST canvases of Mnih et al. (2014): one image
// at a random place of a 60×60 canvas, four 8×8 fragments of others.
func ExampleClutter() {
	split := &datasets.Set{Name: "demo", N: 2, H: 28, W: 28, Pix: make([]uint8, 2*784),
		Labels: []int{3, 8}, Classes: []string{"0", "1", "2", "3", "4", "5", "6", "7", "8", "9"}}
	for x := 6; x < 22; x++ {
		split.Pix[14*28+x] = 255 // image 0: a horizontal stroke
	}
	c, err := datasets.Clutter(nil, split, 0, datasets.Clutter60)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("%d×%d canvas, class %d, box %v\n", c.W, c.H, c.Items[0].Class, c.Items[0].Box)
	// Output:
	// 60×60 canvas, class 3, box [28 40 44 41]
}
