package v1layer_test

import (
	"fmt"

	"github.com/striate/striate/v1layer"
)

// A 256×256 grey frame from the garment-sorting station's camera: folded
// items lie on a dark belt, all along it but one, which lies across. The
// saliency map's maximum falls on the odd one out.
func ExampleSaliency() {
	const h, w = 256, 256
	frame := make([]float32, h*w)
	for i := range frame {
		frame[i] = 0.1 // the belt
	}
	item := func(x0, y0, x1, y1 int) {
		for y := y0; y < y1; y++ {
			for x := x0; x < x1; x++ {
				frame[y*w+x] = 0.8
			}
		}
	}
	for row := 0; row < 4; row++ {
		for col := 0; col < 4; col++ {
			x, y := 20+60*col, 25+60*row
			if row == 2 && col == 1 {
				item(x+8, y-8, x+16, y+16) // across the belt: 8×24
				continue
			}
			item(x, y, x+24, y+8) // along the belt: 24×8
		}
	}
	sal, err := v1layer.NewSaliency(v1layer.SaliencyConfig{})
	if err != nil {
		panic(err)
	}
	var m v1layer.Maps
	if err := sal.Map(&m, frame, h, w, 1); err != nil {
		panic(err)
	}
	best := 0
	for i, v := range m.Pix {
		if v > m.Pix[best] {
			best = i
		}
	}
	// Map pixel (i, j) is centred on frame (x, y) = ((j+0.5)·Scale−0.5, (i+0.5)·Scale−0.5).
	sc := sal.Scale()
	x, y := (best%m.W)*sc+sc/2, (best/m.W)*sc+sc/2
	fmt.Printf("map %d×%d, %d frame px per map px\n", m.W, m.H, sc)
	fmt.Printf("most salient near (%d, %d); the crosswise item spans x 88-96, y 137-161\n", x, y)
	// Output:
	// map 32×32, 8 frame px per map px
	// most salient near (92, 148); the crosswise item spans x 88-96, y 137-161
}
