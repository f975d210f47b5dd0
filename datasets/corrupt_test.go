package datasets

import (
	"math"
	"slices"
	"strings"
	"testing"
)

// constImage returns n pixels of value v.
func constImage(n int, v float32) []float32 {
	x := make([]float32, n)
	for i := range x {
		x[i] = v
	}
	return x
}

// renderWith renders c on src with the stream Apply would use for seed.
func renderWith(c Corruption, src []float32, h, w int, seed uint64) []float64 {
	y := make([]float64, h*w)
	c.render(y, src, h, w, corruptRand(seed, c.Kind))
	return y
}

// TestShotNoiseIsPoisson checks y = Poisson(λx)/λ by its moments, E[y] = x
// and Var[y] = x/λ (the Poisson distribution's mean and variance equal its
// parameter), and its zero frequency P(y = 0) = exp(−λx), at every
// severity.
func TestShotNoiseIsPoisson(t *testing.T) {
	const h, w, x = 100, 200, 0.5
	const n = h * w
	src := constImage(n, x)
	for s := 1; s <= 5; s++ {
		c := Corruption{Kind: CorruptShotNoise, Severity: s}
		l := shotLambda[s-1]
		m := l * x // Poisson mean of the count
		y := renderWith(c, src, h, w, uint64(s))
		var sum, ss float64
		zeros := 0
		for _, v := range y {
			sum += v
			if v == 0 {
				zeros++
			}
			if k := v * l; math.Abs(k-math.Round(k)) > 1e-9 {
				t.Fatalf("severity %d: value %g is not a count over λ = %g", s, v, l)
			}
		}
		mean := sum / n
		for _, v := range y {
			ss += (v - mean) * (v - mean)
		}
		variance := ss / (n - 1)
		// Tolerances: 4 standard errors. The mean's is sqrt(x/λ/n); the
		// sample variance of a Poisson count of mean m has variance
		// (m + 2m²)/n (fourth central moment m + 3m²), divided by λ⁴ here;
		// the zero count is binomial.
		seMean := math.Sqrt(x / l / n)
		seVar := math.Sqrt((m+2*m*m)/n) / (l * l)
		p0 := math.Exp(-m)
		seZero := math.Sqrt(n * p0 * (1 - p0))
		if math.Abs(mean-x) > 4*seMean || math.Abs(variance-x/l) > 4*seVar || math.Abs(float64(zeros)-n*p0) > 4*seZero {
			t.Errorf("severity %d (λ %g): mean %.4f (want %g ± %.4f), variance %.4f (want %.4f ± %.4f), zeros %d (want %.0f ± %.0f)",
				s, l, mean, x, 4*seMean, variance, x/l, 4*seVar, zeros, n*p0, 4*seZero)
		}
	}
	// The published λ = 3 gives counts/3 above 1 for counts ≥ 4, which Apply
	// clips to 1; k/3 is a whole number of grey levels (85k), so Apply
	// equals the rendered values elsewhere.
	c := Corruption{Kind: CorruptShotNoise}
	y := renderWith(c, src, h, w, 9)
	dst := make([]float32, n)
	c.Apply(dst, src, h, w, 9)
	clipped := 0
	for i, v := range y {
		want := float32(math.Round(255*math.Min(v, 1))) / 255
		if dst[i] != want {
			t.Fatalf("pixel %d: Apply %v, rendered %v", i, dst[i], v)
		}
		if v > 1 {
			clipped++
		}
	}
	if clipped == 0 {
		t.Error("no count above λ: clipping untested")
	}
}

// TestImpulseNoiseFraction checks salt-and-pepper: on a mid-grey image the
// fraction of pixels set to 0 or 1 is p, split evenly, within binomial
// bounds, and the other pixels are unchanged.
func TestImpulseNoiseFraction(t *testing.T) {
	const h, w = 100, 200
	const n = h * w
	src := constImage(n, 0.5)
	dst := make([]float32, n)
	for s := 1; s <= 5; s++ {
		p := impulseP[s-1]
		Corruption{Kind: CorruptImpulseNoise, Severity: s}.Apply(dst, src, h, w, uint64(100+s))
		var zeros, ones int
		for _, v := range dst {
			switch v {
			case 0:
				zeros++
			case 1:
				ones++
			case float32(128) / 255: // 0.5 quantised to the nearest grey level
			default:
				t.Fatalf("severity %d: value %v is neither noise nor the input", s, v)
			}
		}
		// Tolerance: 4 binomial standard deviations, sqrt(n p (1 − p)) for
		// the hit count and sqrt(k/4) for the salt count of k hits.
		k := zeros + ones
		if math.Abs(float64(k)-n*p) > 4*math.Sqrt(n*p*(1-p)) || math.Abs(float64(ones)-float64(k)/2) > 4*math.Sqrt(float64(k)/4) {
			t.Errorf("severity %d: %d zeros and %d ones of %d, want %.0f hits split evenly", s, zeros, ones, n, n*p)
		}
	}
}

// TestExactCorruptions checks the corruptions whose output is fixed by the
// definition: brightness y = min(x + b, 1), stripe y = 1 − x in the outer
// columns, translate a zero-filled shift by (±d, ±d).
func TestExactCorruptions(t *testing.T) {
	const h, w = 28, 28
	src := make([]float32, h*w)
	for i := range src {
		src[i] = float32((i*37)%256) / 255 // every grey level
	}
	dst := make([]float32, h*w)
	grey := func(v float32) int { return int(math.Round(255 * float64(v))) }
	for s := 1; s <= 5; s++ {
		b := brightnessB[s-1]
		Corruption{Kind: CorruptBrightness, Severity: s}.Apply(dst, src, h, w, 0)
		for i, v := range dst {
			// The nearest grey level to min(x + b, 1) (either one on an
			// exact tie, as b = 0.5 makes one).
			want := math.Min(255, float64(grey(src[i]))+255*b)
			if math.Abs(float64(grey(v))-want) > 0.5+1e-9 {
				t.Fatalf("brightness-%d pixel %d: grey level %d, want the nearest to %g", s, i, grey(v), want)
			}
		}
	}
	// Stripe: columns 0-6 and 21-27 inverted at the published severity,
	// (published set); 14 each side at 56 px.
	for _, side := range []int{28, 56} {
		big := make([]float32, side*side)
		for i := range big {
			big[i] = float32(i%256) / 255
		}
		out := make([]float32, len(big))
		Corruption{Kind: CorruptStripe}.Apply(out, big, side, side, 0)
		n := 7 * side / 28
		for i, v := range out {
			want := grey(big[i])
			if col := i % side; col < n || col >= side-n {
				want = 255 - want
			}
			if grey(v) != want {
				t.Fatalf("stripe %d px: pixel (%d,%d) = %d, want %d", side, i/side, i%side, grey(v), want)
			}
		}
	}
	// Translate: a zero-filled shift by (±d, ±d); all four sign pairs occur.
	for s := 1; s <= 5; s++ {
		d := int(translateD[s-1])
		seen := map[[2]int]bool{}
		for seed := uint64(0); seed < 32; seed++ {
			Corruption{Kind: CorruptTranslate, Severity: s}.Apply(dst, src, h, w, seed)
			found := false
			for _, dy := range []int{-d, d} {
				for _, dx := range []int{-d, d} {
					ok := true
					for y := 0; y < h && ok; y++ {
						for x := 0; x < w && ok; x++ {
							var want float32
							if sy, sx := y-dy, x-dx; sy >= 0 && sy < h && sx >= 0 && sx < w {
								want = src[sy*w+sx]
							}
							ok = dst[y*w+x] == want
						}
					}
					if ok {
						found, seen[[2]int{dy, dx}] = true, true
					}
				}
			}
			if !found {
				t.Fatalf("translate-%d seed %d is no shift by (±%d, ±%d)", s, seed, d, d)
			}
		}
		if len(seen) != 4 {
			t.Errorf("translate-%d: 32 seeds gave only the shifts %v", s, seen)
		}
	}
}

// TestFogFractal checks the plasma fractal: values in [0,1] reaching both
// ends, seeded, and rougher with a smaller decay; and fog's formula on a
// constant image, whose output lies in [c²/(c+a), c] (F in [0,1], m = c).
func TestFogFractal(t *testing.T) {
	const n = 256
	a, b := make([]float64, n*n), make([]float64, n*n)
	plasmaFractal(a, n, fogDecay, newRand(1, 0))
	plasmaFractal(b, n, fogDecay, newRand(1, 0))
	if !slices.Equal(a, b) {
		t.Fatal("fractal not determined by the stream")
	}
	if slices.Min(a) != 0 || slices.Max(a) != 1 {
		t.Fatalf("fractal range [%g, %g], want [0, 1]", slices.Min(a), slices.Max(a))
	}
	// Roughness: the RMS difference of neighbours relative to the RMS
	// difference 16 px apart grows as the decay falls (diamond-square:
	// finer levels carry relatively more of the variance; Fournier,
	// Fussell & Carpenter 1982).
	roughness := func(decay float64) float64 {
		plasmaFractal(b, n, decay, newRand(2, 0))
		var d1, d16 float64
		for y := range n {
			for x := range n {
				d1 += math.Pow(b[y*n+x]-b[y*n+(x+1)%n], 2)
				d16 += math.Pow(b[y*n+x]-b[y*n+(x+16)%n], 2)
			}
		}
		return math.Sqrt(d1 / d16)
	}
	if r14, r2 := roughness(1.4), roughness(2); !(r14 > r2) {
		t.Errorf("neighbour/16-px difference ratio %.3f at decay 1.4 not above %.3f at decay 2", r14, r2)
	}
	const h, w, c = 28, 28, 0.6
	src := constImage(h*w, c)
	dst := make([]float32, h*w)
	for s := 1; s <= 5; s++ {
		fa := fogA[s-1]
		Corruption{Kind: CorruptFog, Severity: s}.Apply(dst, src, h, w, 5)
		lo, hi := c*c/(c+fa), float64(float32(c))
		for i, v := range dst {
			if float64(v) < lo-0.5/255 || float64(v) > hi+0.5/255 {
				t.Fatalf("fog-%d pixel %d = %v outside [%g, %g]", s, i, v, lo, hi)
			}
		}
		if slices.Min(dst) == slices.Max(dst) {
			t.Errorf("fog-%d left a constant image constant", s)
		}
	}
	black := make([]float32, h*w)
	Corruption{Kind: CorruptFog}.Apply(dst, black, h, w, 5)
	if slices.Max(dst) != 0 {
		t.Error("fog of a black image is not black (m = 0)")
	}
}

// TestSpatter checks y = x·(1 − m) + (63/255)·m with the mask's values 0 or
// in [0.8, 1], and that where the mask is 1 a black image shows exactly
// grey level 63 (MNIST-C's spatter colour).
func TestSpatter(t *testing.T) {
	const h, w = 100, 100
	black := make([]float32, h*w)
	dst := make([]float32, h*w)
	prev := -1
	for s := 1; s <= 5; s++ {
		c := Corruption{Kind: CorruptSpatter, Severity: s}
		const seed = 77
		m := spatterMask(h, w, spatterMu[s-1], float64(h)/28, corruptRand(seed, c.Kind))
		c.Apply(dst, black, h, w, seed)
		full, covered := 0, 0
		for i, v := range m {
			if v != 0 && (v < spatterMaskMin || v > 1+1e-12) {
				t.Fatalf("spatter-%d mask value %g", s, v)
			}
			want := quantise(spatterColour * v)
			if dst[i] != want {
				t.Fatalf("spatter-%d pixel %d = %v, want %v (mask %g)", s, i, dst[i], want, v)
			}
			if v > 1-0.5/63 { // a full mask to within half a grey level of 63
				full++
				if dst[i] != float32(63)/255 {
					t.Fatalf("spatter-%d: mask %g gives %v, want 63/255", s, v, dst[i])
				}
			}
			if v > 0 {
				covered++
			}
		}
		if covered <= prev {
			t.Errorf("spatter-%d covers %d pixels, not more than severity %d's %d", s, covered, s-1, prev)
		}
		prev = covered
		if s == 5 && full == 0 {
			t.Errorf("spatter-5: no pixel with a full mask (max %g)", slices.Max(m))
		}
	}
	// On a white image the same mask darkens: y = 1 − m + (63/255) m.
	white := constImage(h*w, 1)
	m := spatterMask(h, w, spatterMu[2], float64(h)/28, corruptRand(3, CorruptSpatter))
	Corruption{Kind: CorruptSpatter}.Apply(dst, white, h, w, 3)
	for i, v := range m {
		if dst[i] != quantise(1-v+spatterColour*v) {
			t.Fatalf("white spatter pixel %d = %v, mask %g", i, dst[i], v)
		}
	}
}

// TestDottedLineProfile checks the published line on a black image: it is
// the line from (r0, 0) to (r1, 27) for some r0, r1 in 0…26 with intensity
// 1 + ln(1 − d/2.3) at distance d (clipped to [0,1]), and the columns of
// every second 2-column run blank.
func TestDottedLineProfile(t *testing.T) {
	const h, w, rho = 28, 28, 2.3
	black := make([]float32, h*w)
	dst := make([]float32, h*w)
	// expected renders the definition directly: the distance to the
	// segment by projection onto it.
	expected := func(r0, r1 int) []float32 {
		e := make([]float32, h*w)
		for y := range h {
			for x := range w {
				if (x/2)%2 == 1 {
					continue
				}
				dy, dx := float64(r1-r0), float64(w-1)
				t := ((float64(y-r0))*dy + float64(x)*dx) / (dy*dy + dx*dx)
				t = math.Max(0, math.Min(1, t))
				d := math.Hypot(float64(y)-(float64(r0)+t*dy), float64(x)-t*dx)
				if d < rho {
					e[y*w+x] = quantise(1 + math.Log(1-d/rho))
				}
			}
		}
		return e
	}
	for seed := uint64(0); seed < 6; seed++ {
		Corruption{Kind: CorruptDottedLine}.Apply(dst, black, h, w, seed)
		found := false
		for r0 := 0; r0 <= 26 && !found; r0++ {
			for r1 := 0; r1 <= 26 && !found; r1++ {
				found = slices.Equal(dst, expected(r0, r1))
			}
		}
		if !found {
			t.Fatalf("seed %d: the dotted line is no line of the published profile", seed)
		}
		for y := range h {
			for x := 2; x < w; x += 4 {
				if dst[y*w+x] != 0 || dst[y*w+x+1] != 0 {
					t.Fatalf("seed %d: blank column run %d-%d not blank", seed, x, x+1)
				}
			}
		}
		if slices.Max(dst) != 1 {
			t.Errorf("seed %d: line peak %v, want 1 on the line", seed, slices.Max(dst))
		}
	}
	// The profile: 1 at d = 0, 0 from d = ρ(1 − 1/e) ≈ 1.454 px on.
	if lineIntensity(0, rho) != 1 || lineIntensity(rho*(1-1/math.E)+1e-9, rho) != 0 || lineIntensity(1, rho) <= 0 {
		t.Error("line profile does not follow 1 + ln(1 − d/2.3)")
	}
	// Adding to an image: y = min(x + line, 1).
	grey := constImage(h*w, 0.5)
	Corruption{Kind: CorruptDottedLine}.Apply(dst, grey, h, w, 3)
	Corruption{Kind: CorruptDottedLine}.Apply(black, black, h, w, 3)
	for i := range dst {
		if want := quantise(math.Min(float64(black[i])+0.5, 1)); math.Abs(float64(dst[i]-want)) > 1.01/255 {
			t.Fatalf("pixel %d: %v on grey, %v on black", i, dst[i], black[i])
		}
	}
}

// TestZigzag checks the zig-zag's geometry: teeth every a = 2 px along the
// base, every second vertex b = 2 px off it, the polyline spanning columns
// 2…25 unbroken, drawn with the line profile.
func TestZigzag(t *testing.T) {
	segs := zigzagVertices(10, 2, 14, 25, 2, 2)
	l := math.Hypot(4, 23)
	uy, ux := 4/l, 23/l
	for i, s := range segs {
		along := (s[0]-10)*uy + (s[1]-2)*ux
		across := -(s[0]-10)*ux + (s[1]-2)*uy
		switch {
		case i%2 == 0 && (math.Abs(along-2*float64(i)) > 1e-9 || math.Abs(across) > 1e-9):
			t.Errorf("vertex %d at %.3f along, %.3f across; want %d, 0", i, along, across, 2*i)
		case i%2 == 1 && (math.Abs(along-2*float64(i)) > 1e-9 || math.Abs(across-2) > 1e-9):
			t.Errorf("vertex %d at %.3f along, %.3f across; want %d, 2 (up)", i, along, across, 2*i)
		}
		if i > 0 && (s[0] != segs[i-1][2] || s[1] != segs[i-1][3]) {
			t.Errorf("segment %d does not start where %d ends", i, i-1)
		}
	}
	if last := segs[len(segs)-1]; last[2] != 14 || last[3] != 25 {
		t.Errorf("zig-zag ends at (%g, %g), want (14, 25)", last[2], last[3])
	}
	const h, w = 28, 28
	black := make([]float32, h*w)
	dst := make([]float32, h*w)
	for seed := uint64(0); seed < 10; seed++ {
		Corruption{Kind: CorruptZigzag}.Apply(dst, black, h, w, seed)
		for x := 2; x <= 25; x++ {
			var col float32
			for y := range h {
				col = max(col, dst[y*w+x])
			}
			if col < 0.5 {
				t.Fatalf("seed %d: column %d peaks at %v; the zig-zag is broken", seed, x, col)
			}
		}
		for y := range h {
			if dst[y*w] != 0 || dst[y*w+w-1] != 0 {
				t.Fatalf("seed %d: ink in the outer columns, beyond reach 1.45 px of columns 2 and 25", seed)
			}
		}
	}
}

// TestMotionBlurStreak checks the streak on a single bright pixel: along a
// row (φ = 0) the pixel spreads to the R columns before it with weights
// exp(−j²/2s²)/Σ (the one-sided Gaussian of the definition), and any drawn
// direction keeps the total.
func TestMotionBlurStreak(t *testing.T) {
	const h, w = 41, 41
	x := make([]float64, h*w)
	x[20*w+30] = 1
	y := make([]float64, h*w)
	motionBlur(y, x, h, w, 10, 3, 0)
	var z float64
	for j := 0; j <= 10; j++ {
		z += math.Exp(-float64(j*j) / 18)
	}
	for i, v := range y {
		want := 0.0
		if j := 30 - i%w; i/w == 20 && j >= 0 && j <= 10 {
			want = math.Exp(-float64(j*j)/18) / z
		}
		if math.Abs(v-want) > 1e-15 {
			t.Fatalf("pixel (%d,%d) = %g, want %g", i/w, i%w, v, want)
		}
	}
	src := make([]float32, h*w)
	src[20*w+20] = 1
	for seed := uint64(0); seed < 5; seed++ {
		y := renderWith(Corruption{Kind: CorruptMotionBlur}, src, h, w, seed)
		var s float64
		for _, v := range y {
			s += v
		}
		if math.Abs(s-1) > 1e-12 {
			t.Errorf("seed %d: streak sums to %g, want 1", seed, s)
		}
	}
}

// TestGlassBlurSwaps checks the swap passes alone (σ = 0 makes both blurs
// the identity): they permute the pixels, move only pixels at offsets in
// [−δ, δ) from rows and columns δ+1…side−δ, so row 0 and column 0 stay.
func TestGlassBlurSwaps(t *testing.T) {
	const h, w = 28, 28
	x := make([]float64, h*w)
	for i := range x {
		x[i] = float64(i)
	}
	y := make([]float64, h*w)
	glassBlur(y, x, h, w, 0, 1, 2, newRand(4, 0))
	moved := 0
	for i := range y {
		if y[i] != x[i] {
			moved++
			if i/w == 0 || i%w == 0 {
				t.Fatalf("pixel (%d,%d) moved", i/w, i%w)
			}
		}
	}
	sorted := slices.Clone(y)
	slices.Sort(sorted)
	if !slices.Equal(sorted, x) || moved < h*w/4 {
		t.Errorf("swaps are no permutation or moved only %d pixels", moved)
	}
}

// TestCorruptionDeterminismAndGrid checks every kind and severity: seeded
// (same seed same image; the random kinds differ between seeds), outputs on
// the grey-level grid k/255, any image size (20×33 and 56×56), in place.
func TestCorruptionDeterminismAndGrid(t *testing.T) {
	seedFree := map[CorruptionKind]bool{CorruptScale: true, CorruptBrightness: true, CorruptStripe: true, CorruptCannyEdges: true}
	for _, size := range [][2]int{{28, 28}, {20, 33}, {56, 56}} {
		h, w := size[0], size[1]
		src := make([]float32, h*w)
		for i := range src {
			yy, xx := float64(i/w)-float64(h)/3, float64(i%w)-float64(w)/2
			src[i] = float32(math.Round(255*math.Exp(-(yy*yy+4*xx*xx+yy*xx)/float64(h*w)*8))) / 255 // a tilted, off-centre blob
		}
		a, b, c := make([]float32, h*w), make([]float32, h*w), make([]float32, h*w)
		for _, k := range CorruptionKinds() {
			for s := 1; s <= 5; s++ {
				co := Corruption{Kind: k, Severity: s}
				co.Apply(a, src, h, w, 1)
				co.Apply(b, src, h, w, 1)
				copy(c, src)
				co.Apply(c, c, h, w, 1)
				if !slices.Equal(a, b) || !slices.Equal(a, c) {
					t.Fatalf("%v %d×%d: not determined by the seed or wrong in place", co, h, w)
				}
				differs, changed := false, !slices.Equal(a, src)
				for seed := uint64(2); seed < 6; seed++ {
					co.Apply(b, src, h, w, seed)
					differs = differs || !slices.Equal(a, b)
					changed = changed || !slices.Equal(b, src)
				}
				if differs == seedFree[k] {
					t.Errorf("%v %d×%d: differs between seeds %v, want %v", co, h, w, differs, !seedFree[k])
				}
				for i, v := range a {
					if q := float32(math.Round(255*float64(v))) / 255; q != v || v < 0 || v > 1 {
						t.Fatalf("%v %d×%d pixel %d = %v, not a grey level in [0,1]", co, h, w, i, v)
					}
				}
				if !changed {
					t.Errorf("%v %d×%d left the image unchanged under 5 seeds", co, h, w)
				}
			}
		}
	}
}

// TestParseCorruption checks names, the round trip and the errors for bad
// names and severities.
func TestParseCorruption(t *testing.T) {
	if len(CorruptionKinds()) != 15 {
		t.Fatalf("%d kinds, want MNIST-C's 15", len(CorruptionKinds()))
	}
	for _, k := range CorruptionKinds() {
		for s := 1; s <= 5; s++ {
			c := Corruption{Kind: k, Severity: s}
			got, err := ParseCorruption(c.String())
			if err != nil || got != c {
				t.Errorf("ParseCorruption(%q) = %v, %v", c.String(), got, err)
			}
		}
		if c, err := ParseCorruption(k.String()); err != nil || c.Severity != PublishedSeverity {
			t.Errorf("bare %q: %v, %v", k, c, err)
		}
	}
	if (Corruption{Kind: CorruptFog}).String() != "fog-3" {
		t.Error("severity 0 does not name the published severity")
	}
	_, err := ParseCorruption("gaussian_blur-2")
	if err == nil || !strings.Contains(err.Error(), "shot_noise, impulse_noise") || !strings.Contains(err.Error(), "canny_edges") {
		t.Errorf("unknown name: %v", err)
	}
	for _, bad := range []string{"fog-0", "fog-6", "fog-x", "fog-"} {
		if _, err := ParseCorruption(bad); err == nil || !strings.Contains(err.Error(), "1…5") {
			t.Errorf("%q: %v", bad, err)
		}
	}
	if err := (Corruption{Kind: CorruptFog, Severity: 7}).Validate(); err == nil || !strings.Contains(err.Error(), "1…5") {
		t.Errorf("severity 7: %v", err)
	}
	if err := (Corruption{}).Validate(); err == nil || !strings.Contains(err.Error(), "zigzag") {
		t.Errorf("zero kind: %v", err)
	}
}
