package v1layer_test

import (
	"fmt"

	"github.com/striate/striate/v1layer"
)

// The default front end on one 28×28 image: 12 pooled maps of 14×14, the
// reference work's channels.
func ExampleNew() {
	fe, err := v1layer.New(v1layer.Config{})
	if err != nil {
		panic(err)
	}
	c, oh, ow, err := fe.OutShape(28, 28)
	if err != nil {
		panic(err)
	}
	img := make([]float32, 28*28) // a grey image would come from datasets
	var out v1layer.Maps
	fe.Apply(&out, img, 28, 28)
	fmt.Println(c, oh, ow, out.Len())
	for _, ch := range fe.Channels()[3:6] {
		fmt.Printf("%v λ=%g θ=%.0f° polarity %d scale %d\n", ch.Kind, ch.Wavelength, ch.Orientation*180/3.141592653589793, ch.Polarity, ch.Scale)
	}
	// Output:
	// 12 14 14 2352
	// dog λ=0 θ=0° polarity -1 scale 1
	// energy λ=4 θ=0° polarity 0 scale 0
	// energy λ=4 θ=45° polarity 0 scale 0
}

// A learned bank plugs in through Config.Bank with the Gabor stage off;
// here a hand-built bank of one quadrature pair stands in for it.
func ExampleConfig_bank() {
	bank, err := v1layer.GaborBank(v1layer.GaborConfig{Orientations: 1, Scales: 1})
	if err != nil {
		panic(err)
	}
	fe, err := v1layer.New(v1layer.Config{DoG: v1layer.DoGConfig{Disable: true}, Gabor: v1layer.GaborConfig{Disable: true}, Bank: bank})
	if err != nil {
		panic(err)
	}
	fmt.Println(len(fe.Channels()), fe.Channels()[0].Kind, fe.MinSide())
	// Output: 1 energy 8
}
