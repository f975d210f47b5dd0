package v1layer

// padImage copies the h×w image img into the (h+2R)-row buffer dst of row
// stride pw ≥ w+2R, filling the border of width R with zeros or with the
// reflection (d c b a | a b c d) and columns beyond w+2R with zeros. It
// needs R ≤ min(h, w) for BorderReflect.
func padImage(dst, img []float32, h, w, R, pw int, b Border) {
	for py := 0; py < h+2*R; py++ {
		row := dst[py*pw : py*pw+pw]
		y := py - R
		if y < 0 || y >= h {
			if b != BorderReflect {
				clear(row)
				continue
			}
			y = reflectIndex(y, h)
		}
		src := img[y*w : y*w+w]
		copy(row[R:R+w], src)
		if b == BorderReflect {
			for i := 0; i < R; i++ {
				row[R-1-i] = src[reflectIndex(-1-i, w)]
				row[R+w+i] = src[reflectIndex(w+i, w)]
			}
			clear(row[2*R+w:])
		} else {
			clear(row[:R])
			clear(row[R+w:])
		}
	}
}

// reflectIndex maps i in [−n, 2n) into [0, n) by half-sample reflection:
// raster.Reflect on the one period the hot loops need, without its modulo.
func reflectIndex(i, n int) int {
	if i < 0 {
		return -i - 1
	}
	if i >= n {
		return 2*n - i - 1
	}
	return i
}
