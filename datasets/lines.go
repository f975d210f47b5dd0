package datasets

import (
	"math"
	"math/rand/v2"
)

// lineIntensity is MNIST-C's line profile I(d) = 1 + ln(1 − d/ρ) at
// distance d from the line, clipped to [0,1] (0 from d ≥ ρ(1 − 1/e) on).
func lineIntensity(d, rho float64) float64 {
	if d >= rho {
		return 0
	}
	return math.Min(1, math.Max(0, 1+math.Log(1-d/rho)))
}

// segmentDistance returns the distance from (py, px) to the segment
// (y0, x0)–(y1, x1).
func segmentDistance(py, px, y0, x0, y1, x1 float64) float64 {
	vy, vx := y1-y0, x1-x0
	t := 0.0
	if l2 := vy*vy + vx*vx; l2 > 0 {
		t = math.Min(1, math.Max(0, ((py-y0)*vy+(px-x0)*vx)/l2))
	}
	return math.Hypot(py-(y0+t*vy), px-(x0+t*vx))
}

// drawSegment raises dst (h×w) to I(d) of the segment wherever that is
// larger, skipping columns for which keep returns false.
func drawSegment(dst []float64, h, w int, y0, x0, y1, x1, rho float64, keep func(col int) bool) {
	for row := max(0, int(math.Floor(math.Min(y0, y1)-rho))); row <= min(h-1, int(math.Ceil(math.Max(y0, y1)+rho))); row++ {
		for col := max(0, int(math.Floor(math.Min(x0, x1)-rho))); col <= min(w-1, int(math.Ceil(math.Max(x0, x1)+rho))); col++ {
			if keep != nil && !keep(col) {
				continue
			}
			v := lineIntensity(segmentDistance(float64(row), float64(col), y0, x0, y1, x1), rho)
			dst[row*w+col] = math.Max(dst[row*w+col], v)
		}
	}
}

// dottedLine draws one random dotted line of reach rho into dst.
func dottedLine(dst []float64, h, w int, rho float64, r *rand.Rand) {
	r0, r1 := r.IntN(max(1, h-1)), r.IntN(max(1, h-1))
	run := max(1, int(math.Round(2*float64(w)/28)))
	drawSegment(dst, h, w, float64(r0), 0, float64(r1), float64(w-1), rho, func(col int) bool { return (col/run)%2 == 0 })
}

// zigzag draws one random zig-zag polyline of reach rho into dst.
func zigzag(dst []float64, h, w int, rho float64, r *rand.Rand) {
	f := float64(min(h, w)) / 28
	c0 := math.Round(2 * float64(w) / 28)
	c1 := float64(w-1) - c0
	top := math.Min(float64(h-1), math.Round(zigzagTooth*f)) // keep the lifted teeth inside
	r0 := top + float64(r.IntN(h-int(top)))
	r1 := r0 + math.Round(float64(r.IntN(10)-5)*float64(h)/28)
	r1 = math.Min(float64(h-1), math.Max(top, r1))
	for _, s := range zigzagVertices(r0, c0, r1, c1, zigzagTooth*f, zigzagTooth*f) {
		drawSegment(dst, h, w, s[0], s[1], s[2], s[3], rho, nil)
	}
}

// zigzagVertices returns the segments (y0, x0, y1, x1) of a zig-zag along
// (r0, c0)→(r1, c1): vertices every a px along the base, every second one
// lifted by b px across it (towards smaller rows for a left-to-right base),
// ending at the base's end.
func zigzagVertices(r0, c0, r1, c1, a, b float64) [][4]float64 {
	vy, vx := r1-r0, c1-c0
	l := math.Hypot(vy, vx)
	if l == 0 {
		return [][4]float64{{r0, c0, r1, c1}}
	}
	uy, ux := vy/l, vx/l
	ny, nx := -ux, uy
	var pts [][2]float64
	k := 0
	for ; float64(k)*a <= l; k++ {
		py, px := r0+float64(k)*a*uy, c0+float64(k)*a*ux
		if k%2 == 1 {
			py, px = py+b*ny, px+b*nx
		}
		pts = append(pts, [2]float64{py, px})
	}
	if float64(k-1)*a < l {
		pts = append(pts, [2]float64{r1, c1})
	}
	segs := make([][4]float64, 0, len(pts)-1)
	for i := 1; i < len(pts); i++ {
		segs = append(segs, [4]float64{pts[i-1][0], pts[i-1][1], pts[i][0], pts[i][1]})
	}
	return segs
}
