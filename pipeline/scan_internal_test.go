package pipeline

import (
	"encoding/json"
	"math"
	"os"
	"testing"
)

// Winner-take-all with inhibition of return (Koch & Ullman 1985) visits the
// peaks of a map in decreasing order of height, each once: on a synthetic
// map of four Gaussian bumps of known heights and places, inhibiting a box
// around each winner gives the bumps' order and positions.
func TestWTAVisitsPeaksInOrder(t *testing.T) {
	const mh, mw, scale = 12, 16, 8.0
	peaks := []struct {
		i, j int
		v    float64
	}{{3, 12, 0.6}, {8, 3, 1.0}, {9, 13, 0.8}, {2, 2, 0.4}} // map rows, columns, heights
	m := make([]float32, mh*mw)
	for i := range mh {
		for j := range mw {
			for _, p := range peaks {
				d2 := float64((i-p.i)*(i-p.i) + (j-p.j)*(j-p.j))
				m[i*mw+j] += float32(p.v * math.Exp(-d2/2)) // σ = 1 map pixel
			}
		}
	}
	w := wta{m: m, mh: mh, mw: mw, scale: scale}
	wantOrder := []int{1, 2, 0, 3} // by decreasing height
	for n, pi := range wantOrder {
		p := peaks[pi]
		k, x, y, v := w.next()
		if k != p.i*mw+p.j {
			t.Fatalf("fixation %d at map pixel (%d, %d); want peak %d at (%d, %d)", n, k/mw, k%mw, pi, p.i, p.j)
		}
		// Map pixel centres in frame coordinates: (j+0.5)·8 − 0.5.
		if wx, wy := (float64(p.j)+0.5)*scale-0.5, (float64(p.i)+0.5)*scale-0.5; x != wx || y != wy {
			t.Errorf("fixation %d at frame (%v, %v); want (%v, %v)", n, x, y, wx, wy)
		}
		if math.Abs(float64(v)-p.v) > 0.02 { // the other bumps' tails add < 0.02 at a peak
			t.Errorf("fixation %d value %v; want about %v", n, v, p.v)
		}
		// Inhibit the frame box of ±2.5 map pixels around the winner.
		r := int(2.5 * scale)
		w.inhibit(k, [4]int{int(x) - r, int(y) - r, int(x) + r + 1, int(y) + r + 1})
		for di := -2; di <= 2; di++ {
			for dj := -2; dj <= 2; dj++ {
				if ii, jj := p.i+di, p.j+dj; ii >= 0 && ii < mh && jj >= 0 && jj < mw && m[ii*mw+jj] != 0 {
					t.Errorf("after fixation %d, map pixel (%d, %d) is %v; want it inhibited", n, ii, jj, m[ii*mw+jj])
				}
			}
		}
	}
	// What is left are the bumps' far tails: at least 3 map pixels from
	// every peak, so below e^(−9/2) times the sum of the heights.
	if _, _, _, v := w.next(); v > float32(2.8*math.Exp(-4.5)) {
		t.Errorf("after the four peaks the winner is %v; want only tails below %v", v, 2.8*math.Exp(-4.5))
	}
	// Ties go to the first pixel in row-major order.
	flat := wta{m: []float32{0, 2, 2, 1}, mh: 2, mw: 2, scale: 1}
	if k, _, _, _ := flat.next(); k != 1 {
		t.Errorf("tie won by pixel %d; want 1 (first in row-major order)", k)
	}
}

// The stop rule on a map: Scan's loop ends when the winner falls below
// StopFraction of the first winner. Checked on the same kind of map via
// the fixation values alone.
func TestWTAStopFraction(t *testing.T) {
	m := []float32{1, 0, 0.5, 0, 0.04, 0, 0.3, 0}
	w := wta{m: m, mh: 1, mw: 8, scale: 1}
	var got []float32
	first := float32(0)
	for {
		k, _, _, v := w.next()
		if first == 0 {
			first = v
		}
		if v <= 0 || v < 0.05*first {
			break
		}
		got = append(got, v)
		w.inhibit(k, [4]int{})
	}
	if len(got) != 3 || got[0] != 1 || got[1] != 0.5 || got[2] != 0.3 {
		t.Errorf("visited %v; want [1 0.5 0.3] (0.04 is below 5%% of the first peak)", got)
	}
}

// The background grey of a search region is its median to within half a
// bin of the 1024-bin histogram (the tolerance: 1/2048), against
// numpy.median (NumPy 1.24.2; testdata/pipeline/gen_scanmedian.py) on
// rectangles of a random image.
func TestMedianGreyNumPy(t *testing.T) {
	var img struct {
		H, W int
		In   []float32
	}
	var ref struct {
		Cases []struct {
			Rect   [4]int
			Median float64
		}
	}
	for path, v := range map[string]any{"../testdata/pipeline/median.json": &img, "../testdata/pipeline/scan_median.json": &ref} {
		b, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		if err := json.Unmarshal(b, v); err != nil {
			t.Fatal(err)
		}
	}
	if len(ref.Cases) == 0 || len(img.In) != img.H*img.W {
		t.Fatalf("reference files hold %d cases, %d pixels for %d×%d", len(ref.Cases), len(img.In), img.H, img.W)
	}
	var wk scanWork
	for _, c := range ref.Cases {
		got := medianGrey(&wk, img.In, c.Rect, img.W)
		if math.Abs(float64(got)-c.Median) > 1.0/2048 {
			t.Errorf("rect %v: median %v; NumPy %v", c.Rect, got, c.Median)
		}
	}
}

// A scrap 2 px from an item joins its ink group (the dilation by Gap = 1
// bridges gaps of up to 2 px), and the group's core is the item alone
// (hand-worked boxes); a scrap overlapping the item's ink is one component
// with it, so there is no core.
func TestCoreDropsJoinedScrap(t *testing.T) {
	const n = 60
	s := &Scanner{cfg: ScanConfig{ItemSize: 28}.withDefaults(nil)}
	frame := func(scrapX int) []float32 {
		img := make([]float32, n*n)
		for y := 20; y < 40; y++ {
			for x := 20; x < 24; x++ {
				img[y*n+x] = 1 // the item: a 4×20 bar
			}
		}
		for y := 25; y < 31; y++ {
			for x := scrapX; x < scrapX+6; x++ {
				img[y*n+x] = 0.8 // a 6×6 scrap
			}
		}
		return img
	}
	var wk scanWork
	rect := [4]int{0, 0, n, n}
	img := frame(26) // columns 24 and 25 empty
	g, ok := s.group(&wk, img, n, rect, 22, 30)
	if !ok || g.box != [4]int{20, 20, 32, 40} {
		t.Fatalf("group %v (found %v); want the bar and the scrap, [20 20 32 40]", g.box, ok)
	}
	_, box, ok := s.core(&wk, img, n, g, rect)
	if !ok || box != [4]int{20, 20, 24, 40} {
		t.Errorf("core %v (found %v); want the bar alone, [20 20 24 40]", box, ok)
	}
	img = frame(22) // overlaps the bar
	if g, ok = s.group(&wk, img, n, rect, 22, 30); !ok {
		t.Fatal("no group on the overlapping frame")
	}
	if _, box, ok := s.core(&wk, img, n, g, rect); ok {
		t.Errorf("overlapping scrap: core %v; want none (one component)", box)
	}
}
