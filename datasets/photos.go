package datasets

import (
	"bytes"
	"embed"
	"fmt"
	"image"
	"image/png"
	"sync"
)

//go:embed photos/*.png
var photoFS embed.FS

// Photo is one grey natural photograph, pixel (y, x) at Pix[y*W+x], values in
// [0,1] (8-bit grey level / 255).
type Photo struct {
	Name, Source, License string
	H, W                  int
	Pix                   []float32
}

// skimageNote says where every embedded photo was taken from.
const skimageNote = "scikit-image 0.19.3 sample data (Debian python3-skimage, skimage/data/)"

// rgb2grayNote says how the colour originals were made grey.
const rgb2grayNote = "; converted to 8-bit grey by skimage.color.rgb2gray (BT.709 weights 0.2125/0.7154/0.0721), rounded"

// photoInfo lists the embedded photos in file-name order with their sources
// and licences as stated in the docstrings of skimage/data/_fetchers.py
// (photos/README.md repeats them).
var photoInfo = []struct{ name, source, license string }{
	{"astronaut", "Eileen Collins, NASA astronaut; NASA Great Images database (flic.kr/p/r9qvLn); " + skimageNote + " astronaut.png" + rgb2grayNote,
		"public domain (\"no known copyright restrictions, released into the public domain\")"},
	{"brick", "brick wall, CC0Textures \"Bricks25\", perspective-corrected, rotated, cropped and scaled by scikit-image; " + skimageNote + " brick.png",
		"CC0 1.0 (Creative Commons CC0 License)"},
	{"camera", "cameraman photograph by Lav Varshney; " + skimageNote + " camera.png",
		"CC0 1.0 (\"No copyright restrictions. CC0 by the photographer\")"},
	{"chelsea", "Chelsea the cat, photograph by Stefan van der Walt; " + skimageNote + " chelsea.png" + rgb2grayNote,
		"CC0 1.0 (\"No copyright restrictions. CC0 by the photographer\")"},
	{"coffee", "coffee cup, photograph by Rachel Michetti, courtesy of Pikolo Espresso Bar; " + skimageNote + " coffee.png" + rgb2grayNote,
		"CC0 1.0 (\"No copyright restrictions. CC0 by the photographer\")"},
	{"grass", "grass, DeviantArt linolafett \"Grass-01\", top-left 512×512 crop made grey by scikit-image; " + skimageNote + " grass.png",
		"CC0 1.0 (Creative Commons CC0 License)"},
	{"gravel", "gravel, CC0Textures \"Gravel04\", rescaled to 1024×1024 and top-left 512×512 cropped by scikit-image; " + skimageNote + " gravel.png",
		"CC0 1.0 (Creative Commons CC0 License)"},
	{"hubble_deep_field", "Hubble eXtreme Deep Field, NASA, HubbleSite news release 2012-37; " + skimageNote + " hubble_deep_field.jpg" + rgb2grayNote,
		"public domain (NASA: \"may be freely used in the public domain\")"},
	{"rocket", "launch of DSCOVR on Falcon 9, SpaceX Photos (Flickr); " + skimageNote + " rocket.jpg" + rgb2grayNote,
		"public domain (released into the public domain by SpaceX)"},
}

var (
	photoOnce sync.Once
	photoGray []*image.Gray
	photoErr  error
)

func decodePhotos() {
	for _, in := range photoInfo {
		b, err := photoFS.ReadFile("photos/" + in.name + ".png")
		if err != nil {
			photoErr = fmt.Errorf("datasets: embedded photo %s: %w", in.name, err)
			return
		}
		img, err := png.Decode(bytes.NewReader(b))
		if err != nil {
			photoErr = fmt.Errorf("datasets: embedded photo %s: %w", in.name, err)
			return
		}
		g, ok := img.(*image.Gray)
		if !ok {
			photoErr = fmt.Errorf("datasets: embedded photo %s is %T, want 8-bit grey", in.name, img)
			return
		}
		photoGray = append(photoGray, g)
	}
}

// Photos returns the embedded set of grey natural photographs (see
// photos/README.md), in name order, each a fresh copy the caller may change.
// The PNGs are decoded once per process.
func Photos() ([]Photo, error) {
	photoOnce.Do(decodePhotos)
	if photoErr != nil {
		return nil, photoErr
	}
	out := make([]Photo, len(photoGray))
	for k, g := range photoGray {
		b := g.Bounds()
		p := Photo{Name: photoInfo[k].name, Source: photoInfo[k].source, License: photoInfo[k].license,
			H: b.Dy(), W: b.Dx(), Pix: make([]float32, b.Dx()*b.Dy())}
		for y := 0; y < p.H; y++ {
			row := g.Pix[y*g.Stride : y*g.Stride+p.W]
			for x, v := range row {
				p.Pix[y*p.W+x] = float32(v) / 255
			}
		}
		out[k] = p
	}
	return out, nil
}
