package v1layer

import "github.com/striate/striate/internal/raster"

// gaussSep writes the separable correlation of the h×w map src with the
// odd-length 1-D kernel g along rows and then along columns to dst, with
// border b; tmp holds h·w values. It is the plain path used by contrast
// normalisation; the filter bank itself runs through the engine.
func gaussSep(dst, src []float32, h, w int, g []float32, b Border, tmp []float32) {
	r := len(g) / 2
	for y := 0; y < h; y++ {
		row := src[y*w : y*w+w]
		out := tmp[y*w : y*w+w]
		for x := range out {
			var s float32
			for t := -r; t <= r; t++ {
				xx := x + t
				if xx < 0 || xx >= w {
					if b != BorderReflect {
						continue
					}
					xx = raster.Reflect(xx, w)
				}
				s += g[t+r] * row[xx]
			}
			out[x] = s
		}
	}
	for y := 0; y < h; y++ {
		out := dst[y*w : y*w+w]
		clear(out)
		for t := -r; t <= r; t++ {
			yy := y + t
			if yy < 0 || yy >= h {
				if b != BorderReflect {
					continue
				}
				yy = raster.Reflect(yy, h)
			}
			c := g[t+r]
			in := tmp[yy*w : yy*w+w]
			for x := range out {
				out[x] += c * in[x]
			}
		}
	}
}
