package datasets

import (
	"fmt"
	"image"
	"math"

	"golang.org/x/image/draw"
)

// BT.601 luma weights (ITU-R BT.601-7, section 2.5.1:
// E'Y = 0.299 E'R + 0.587 E'G + 0.114 E'B), applied to the gamma-encoded
// components as stored in the file, as the standard does.
const (
	LumaR = 0.299
	LumaG = 0.587
	LumaB = 0.114
)

// luma16 returns the BT.601 luma of a colour as a 16-bit value. Colours are
// taken as image.Image reports them (alpha-premultiplied), so transparent
// parts count as composited over black.
func luma16(r, g, b uint32) uint16 {
	return uint16(math.Round(LumaR*float64(r) + LumaG*float64(g) + LumaB*float64(b)))
}

// grayImage converts img to a 16-bit luma image with the same bounds.
func grayImage(img image.Image) *image.Gray16 {
	b := img.Bounds()
	out := image.NewGray16(b)
	if g, ok := img.(*image.Gray); ok {
		for y := b.Min.Y; y < b.Max.Y; y++ {
			for x := b.Min.X; x < b.Max.X; x++ {
				v := uint16(g.GrayAt(x, y).Y) * 0x101
				out.Pix[out.PixOffset(x, y)], out.Pix[out.PixOffset(x, y)+1] = byte(v>>8), byte(v)
			}
		}
		return out
	}
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			r, g, bl, _ := img.At(x, y).RGBA()
			v := luma16(r, g, bl)
			i := out.PixOffset(x, y)
			out.Pix[i], out.Pix[i+1] = byte(v>>8), byte(v)
		}
	}
	return out
}

// ToGray converts img to grey levels in [0,1] by BT.601 luma (LumaR, LumaG,
// LumaB on the stored, gamma-encoded components; alpha-premultiplied colours,
// so transparency counts as black) and resizes it to h×w with x/image/draw's
// BiLinear kernel (which widens its support when shrinking, so it averages
// rather than skips pixels). The whole image is stretched to h×w; the aspect
// ratio is not kept. h or w ≤ 0 keeps the image's own size. The result is
// written row-major into dst, reused when its capacity suffices, and returned.
// It panics if img has empty bounds.
func ToGray(dst []float32, img image.Image, h, w int) []float32 {
	b := img.Bounds()
	if b.Empty() {
		panic(fmt.Sprintf("datasets: ToGray of an empty image (bounds %v)", b))
	}
	if h <= 0 || w <= 0 {
		h, w = b.Dy(), b.Dx()
	}
	g := grayImage(img)
	if b.Dx() != w || b.Dy() != h {
		s := image.NewGray16(image.Rect(0, 0, w, h))
		draw.BiLinear.Scale(s, s.Bounds(), g, b, draw.Src, nil)
		g = s
	}
	if cap(dst) < h*w {
		dst = make([]float32, h*w)
	}
	dst = dst[:h*w]
	for i := range dst {
		dst[i] = float32(uint16(g.Pix[2*i])<<8|uint16(g.Pix[2*i+1])) / 65535
	}
	return dst
}
