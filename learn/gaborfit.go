package learn

import (
	"fmt"
	"math"
)

// GaborFit is a least-squares 2-D Gabor fit to a square patch. Coordinates
// are in pixels from the patch centre with x to the right and y up (the
// v1layer.Channel convention), so on a size×size patch the pixel in row r,
// column c sits at x = c − (size−1)/2, y = (size−1)/2 − r. The model is
//
//	g(x,y) = Amplitude · exp(−x'²/(2σx²) − y'²/(2σy²)) · cos(2π·x'/λ − ψ)
//	x' = (x−X0)·cosθ + (y−Y0)·sinθ,   y' = −(x−X0)·sinθ + (y−Y0)·cosθ
//
// with θ = Orientation the carrier direction in [0, π), λ = Wavelength,
// ψ = Phase in (−π, π] (0 even, π/2 odd), σx = SigmaX across the stripes
// (along the carrier) and σy = SigmaY along them.
type GaborFit struct {
	X0, Y0      float64
	Orientation float64
	Wavelength  float64
	Phase       float64
	SigmaX      float64
	SigmaY      float64
	Amplitude   float64
	R2          float64 // 1 − SS_res/SS_tot about the patch mean
}

// Aspect returns γ = σx/σy, the aspect ratio in the v1layer convention
// exp(−(x'² + γ²y'²)/(2σ²)) with σ = σx.
func (g GaborFit) Aspect() float64 { return g.SigmaX / g.SigmaY }

// halfAmp is sqrt(2 ln 2): a Gaussian falls to half its peak at
// sqrt(2 ln 2) standard deviations.
var halfAmp = math.Sqrt(2 * math.Ln2)

// FreqBandwidth returns the spatial-frequency bandwidth in octaves,
// log2((f+Δf)/(f−Δf)) with f = 1/λ and Δf = sqrt(2 ln 2)/(2π·σx) the
// half-amplitude half-width of the Gabor's Gaussian frequency response
// along the carrier (the relation behind scikit-image's gabor_kernel
// bandwidth argument, checked in the tests). +Inf if Δf ≥ f (low-pass).
func (g GaborFit) FreqBandwidth() float64 {
	f := 1 / g.Wavelength
	df := halfAmp / (2 * math.Pi * g.SigmaX)
	if df >= f {
		return math.Inf(1)
	}
	return math.Log2((f + df) / (f - df))
}

// OrientationBandwidth returns the full orientation bandwidth at half
// amplitude in degrees, 2·atan(Δf⊥/f) with Δf⊥ = sqrt(2 ln 2)/(2π·σy), the
// half-width of the frequency response perpendicular to the carrier seen
// from the peak frequency f (the same Gaussian relation, applied across).
func (g GaborFit) OrientationBandwidth() float64 {
	f := 1 / g.Wavelength
	df := halfAmp / (2 * math.Pi * g.SigmaY)
	return 2 * math.Atan(df/f) * 180 / math.Pi
}

// Render writes the fitted Gabor on a size×size grid (row-major) into dst,
// allocating when dst is short, and returns it.
func (g GaborFit) Render(dst []float32, size int) []float32 {
	if cap(dst) < size*size {
		dst = make([]float32, size*size)
	}
	dst = dst[:size*size]
	p := gaborParams{g.X0, g.Y0, g.Orientation, 1 / g.Wavelength, math.Log(g.SigmaX), math.Log(g.SigmaY)}
	c := float64(size-1) / 2
	a := g.Amplitude * math.Cos(g.Phase)
	b := g.Amplitude * math.Sin(g.Phase)
	for r := 0; r < size; r++ {
		for col := 0; col < size; col++ {
			e, cs, sn := p.basis(float64(col)-c, c-float64(r))
			dst[r*size+col] = float32(e * (a*cs + b*sn))
		}
	}
	return dst
}

// gaborParams are the non-linear parameters; amplitude and phase enter
// linearly through a·cos + b·sin and are solved for in closed form
// (variable projection, Golub & Pereyra 1973).
type gaborParams [6]float64 // x0, y0, θ, f (cycles/px), log σx, log σy

func (p gaborParams) basis(x, y float64) (env, cs, sn float64) {
	ct, st := math.Cos(p[2]), math.Sin(p[2])
	dx, dy := x-p[0], y-p[1]
	xp := dx*ct + dy*st
	yp := -dx*st + dy*ct
	sx, sy := math.Exp(p[4]), math.Exp(p[5])
	env = math.Exp(-xp*xp/(2*sx*sx) - yp*yp/(2*sy*sy))
	ph := 2 * math.Pi * p[3] * xp
	return env, math.Cos(ph), math.Sin(ph)
}

// gaborFitter holds the patch and scratch for one fit.
type gaborFitter struct {
	size   int
	w      []float64
	xs, ys []float64
	r, r2  []float64
	u, v   []float64
	jac    [6][]float64
}

func newGaborFitter(size int) *gaborFitter {
	n := size * size
	f := &gaborFitter{size: size, w: make([]float64, n), xs: make([]float64, n), ys: make([]float64, n),
		r: make([]float64, n), r2: make([]float64, n),
		u: make([]float64, n), v: make([]float64, n)}
	c := float64(size-1) / 2
	for r := 0; r < size; r++ {
		for col := 0; col < size; col++ {
			f.xs[r*size+col] = float64(col) - c
			f.ys[r*size+col] = c - float64(r)
		}
	}
	for i := range f.jac {
		f.jac[i] = make([]float64, n)
	}
	return f
}

// residual writes w − Φ(p)·[a b] into r for the least-squares a, b and
// returns the residual sum of squares and a, b.
func (f *gaborFitter) residual(p gaborParams, r []float64) (ss, a, b float64) {
	var scc, sss, scs, swc, sws float64
	n := len(f.w)
	u, v := f.u, f.v
	// the normal equations of the 2-parameter linear problem
	for i := 0; i < n; i++ {
		e, cs, sn := p.basis(f.xs[i], f.ys[i])
		ui, vi := e*cs, e*sn
		u[i], v[i] = ui, vi
		scc += ui * ui
		sss += vi * vi
		scs += ui * vi
		swc += f.w[i] * ui
		sws += f.w[i] * vi
	}
	det := scc*sss - scs*scs
	if det > 1e-12*(scc*sss+1e-300) {
		a = (swc*sss - sws*scs) / det
		b = (sws*scc - swc*scs) / det
	} else if scc > 0 {
		a = swc / scc
	}
	for i := 0; i < n; i++ {
		d := f.w[i] - (a*u[i] + b*v[i])
		r[i] = d
		ss += d * d
	}
	return ss, a, b
}

// clampParams keeps parameters in the range where the model is meaningful:
// centre within the patch, frequency in [0, 0.5] cycles/px (Nyquist),
// envelope σ in [0.5, 2·size] px.
func (f *gaborFitter) clamp(p gaborParams) gaborParams {
	h := float64(f.size) / 2
	p[0] = math.Max(-h, math.Min(h, p[0]))
	p[1] = math.Max(-h, math.Min(h, p[1]))
	p[3] = math.Max(0, math.Min(0.5, p[3]))
	lo, hi := math.Log(0.5), math.Log(2*float64(f.size))
	p[4] = math.Max(lo, math.Min(hi, p[4]))
	p[5] = math.Max(lo, math.Min(hi, p[5]))
	return p
}

// lm runs Levenberg–Marquardt (Marquardt 1963) on the projected residual
// from start p and returns the best parameters and residual sum of squares.
func (f *gaborFitter) lm(p gaborParams) (gaborParams, float64) {
	p = f.clamp(p)
	ss, _, _ := f.residual(p, f.r)
	mu := 1e-2
	n := len(f.w)
	for it := 0; it < gaborMaxIter; it++ {
		// forward-difference Jacobian of the residual
		for k := 0; k < 6; k++ {
			h := 1e-6 * math.Max(1, math.Abs(p[k]))
			q := p
			q[k] += h
			f.residual(q, f.jac[k])
			for i := 0; i < n; i++ {
				f.jac[k][i] = (f.jac[k][i] - f.r[i]) / h
			}
		}
		var jtj [6][6]float64
		var jtr [6]float64
		for k := 0; k < 6; k++ {
			for l := k; l < 6; l++ {
				var s float64
				for i := 0; i < n; i++ {
					s += f.jac[k][i] * f.jac[l][i]
				}
				jtj[k][l], jtj[l][k] = s, s
			}
			var s float64
			for i := 0; i < n; i++ {
				s += f.jac[k][i] * f.r[i]
			}
			jtr[k] = s
		}
		improved := false
		for try := 0; try < 10; try++ {
			var m [6][7]float64
			for k := 0; k < 6; k++ {
				for l := 0; l < 6; l++ {
					m[k][l] = jtj[k][l]
				}
				m[k][k] += mu * (jtj[k][k] + 1e-9)
				m[k][6] = -jtr[k]
			}
			delta, ok := solve6(m)
			if !ok {
				mu *= 10
				continue
			}
			q := p
			for k := range q {
				q[k] += delta[k]
			}
			q = f.clamp(q)
			ssq, _, _ := f.residual(q, f.r2)
			if ssq < ss {
				rel := (ss - ssq) / math.Max(ss, 1e-300)
				p, ss = q, ssq
				f.r, f.r2 = f.r2, f.r
				mu = math.Max(mu/3, 1e-9)
				improved = true
				if rel < 1e-8 {
					return p, ss
				}
				break
			}
			mu *= 10
		}
		if !improved {
			break
		}
	}
	return p, ss
}

// gaborMaxIter caps Levenberg–Marquardt iterations per start; fits of
// 16×16 atoms settle in 10-30.
const gaborMaxIter = 50

// solve6 solves the 6×6 system in m (augmented) by Gaussian elimination
// with partial pivoting.
func solve6(m [6][7]float64) ([6]float64, bool) {
	var x [6]float64
	for c := 0; c < 6; c++ {
		piv := c
		for r := c + 1; r < 6; r++ {
			if math.Abs(m[r][c]) > math.Abs(m[piv][c]) {
				piv = r
			}
		}
		if m[piv][c] == 0 || math.IsNaN(m[piv][c]) {
			return x, false
		}
		m[c], m[piv] = m[piv], m[c]
		for r := c + 1; r < 6; r++ {
			fct := m[r][c] / m[c][c]
			for k := c; k < 7; k++ {
				m[r][k] -= fct * m[c][k]
			}
		}
	}
	for r := 5; r >= 0; r-- {
		s := m[r][6]
		for k := r + 1; k < 6; k++ {
			s -= m[r][k] * x[k]
		}
		x[r] = s / m[r][r]
	}
	return x, true
}

// FitGabor fits the 2-D Gabor model of GaborFit to the size×size patch w
// (row-major) by least squares. Starting points come from the peak of the
// patch's discrete Fourier transform (carrier frequency and direction) and
// the centroid and spread of its energy (centre and envelope); five
// starts (that point, the frequency ×0.8 and ×1.25, the envelope ×0.7 and
// ×1.4) are tried and the best
// Levenberg–Marquardt result is kept. It fails if len(w) ≠ size² or size < 3.
func FitGabor(w []float32, size int) (GaborFit, error) {
	if size < 3 || len(w) != size*size {
		return GaborFit{}, fmt.Errorf("learn: FitGabor got %d values for a %d×%d patch; want size ≥ 3 and size² values", len(w), size, size)
	}
	f := newGaborFitter(size)
	return f.fit(w), nil
}

func (f *gaborFitter) fit(w []float32) GaborFit {
	n := len(f.w)
	var mean float64
	for i, v := range w {
		f.w[i] = float64(v)
		mean += float64(v)
	}
	mean /= float64(n)
	var sst float64
	for _, v := range f.w {
		sst += (v - mean) * (v - mean)
	}
	if sst == 0 {
		return GaborFit{Wavelength: math.Inf(1), SigmaX: 1, SigmaY: 1}
	}
	// Energy centroid and spread.
	var e, cx, cy float64
	for i, v := range f.w {
		e += v * v
		cx += v * v * f.xs[i]
		cy += v * v * f.ys[i]
	}
	cx, cy = cx/e, cy/e
	var vr float64
	for i, v := range f.w {
		dx, dy := f.xs[i]-cx, f.ys[i]-cy
		vr += v * v * (dx*dx + dy*dy)
	}
	// w² ∝ exp(−r²/σ²) has E[r²] = σ² in 2-D.
	sig0 := math.Max(1, math.Min(float64(f.size)/2, math.Sqrt(vr/e)))
	fx, fy := f.peakFrequency()
	f0 := math.Hypot(fx, fy)
	th0 := math.Atan2(fy, fx)
	best := gaborParams{}
	bestSS := math.Inf(1)
	for _, st := range [][2]float64{{1, 1}, {0.8, 1}, {1.25, 1}, {1, 0.7}, {1, 1.4}} {
		start := gaborParams{cx, cy, th0, f0 * st[0], math.Log(sig0 * st[1]), math.Log(sig0 * st[1])}
		p, r := f.lm(start)
		if r < bestSS {
			best, bestSS = p, r
		}
	}
	_, a, b := f.residual(best, f.r)
	amp := math.Hypot(a, b)
	psi := math.Atan2(b, a)
	th := math.Mod(best[2], 2*math.Pi)
	if th < 0 {
		th += 2 * math.Pi
	}
	if th >= math.Pi { // θ+π flips x' and hence negates the phase
		th -= math.Pi
		psi = -psi
	}
	if psi <= -math.Pi {
		psi += 2 * math.Pi
	}
	wl := math.Inf(1)
	if best[3] > 0 {
		wl = 1 / best[3]
	}
	return GaborFit{X0: best[0], Y0: best[1], Orientation: th, Wavelength: wl, Phase: psi,
		SigmaX: math.Exp(best[4]), SigmaY: math.Exp(best[5]), Amplitude: amp, R2: 1 - bestSS/sst}
}

// peakFrequency returns the (fx, fy) in cycles/px, y up, of the largest
// DFT magnitude excluding DC, over the half-plane of non-negative fx.
func (f *gaborFitter) peakFrequency() (float64, float64) {
	s := f.size
	var bx, by, bm float64
	for ky := -(s / 2); ky <= s/2; ky++ {
		for kx := 0; kx <= s/2; kx++ {
			if kx == 0 && ky <= 0 {
				continue
			}
			fx, fy := float64(kx)/float64(s), float64(ky)/float64(s)
			var re, im float64
			for i, v := range f.w {
				ph := 2 * math.Pi * (fx*f.xs[i] + fy*f.ys[i])
				re += v * math.Cos(ph)
				im += v * math.Sin(ph)
			}
			if m := re*re + im*im; m > bm {
				bm, bx, by = m, fx, fy
			}
		}
	}
	return bx, by
}
