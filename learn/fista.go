package learn

import "math"

// fistaRow runs FISTA (Beck & Teboulle 2009, constant step 1/L) for one
// signal. a holds the starting code and receives the result; c0 = D·x are
// the signal's correlations with the atoms and xx = ||x||².
//
// The iteration, with G = DDᵀ and ∇f(y) = G·y − c0:
//
//	a_k     = prox_{λ/L}(y_k − ∇f(y_k)/L)
//	t_{k+1} = (1 + sqrt(1 + 4·t_k²)) / 2
//	y_{k+1} = a_k + ((t_k − 1)/t_{k+1})·(a_k − a_{k−1})
//
// It keeps P_k = G·a_k rather than G·y_k: since y is an affine combination of
// two codes, G·y_{k+1} = P_k + β(P_k − P_{k−1}), so one sparse product per
// step gives both the next gradient and the objective
// F(a_k) = ½xx − a_k·c0 + ½a_k·P_k + λ||a_k||₁ for the stopping rule.
// With Restart, the momentum is reset (t = 1) whenever
// (y_k − a_k)·(a_k − a_{k−1}) > 0 (O'Donoghue & Candès 2015, gradient scheme).
func (c *Coder) fistaRow(s *scratch, a, c0 []float32, xx float64) (iters int, obj float64, conv bool) {
	k := c.dict.k
	g := c.gram
	lam := c.cfg.Lambda
	invL := float32(1 / c.lip)
	thr := float32(lam / c.lip)
	nonneg := c.cfg.NonNeg
	aPrev, p, pPrev, ya := s.a0, s.p, s.p0, s.ya

	if nonneg {
		for j, v := range a {
			if v < 0 {
				a[j] = 0
			}
		}
	}
	sparseRowTimes(p, a, g, k)
	f := objectiveFrom(a, c0, p, xx, lam)
	copy(aPrev, a)
	copy(pPrev, p)
	t := 1.0
	beta := float32(0)
	for iters < c.cfg.MaxIter {
		iters++
		// y = a + β(a − aPrev); gradient at y = P + β(P − Pprev) − c0.
		var restartDot float64
		for j := 0; j < k; j++ {
			y := a[j] + beta*(a[j]-aPrev[j])
			grad := p[j] + beta*(p[j]-pPrev[j]) - c0[j]
			nv := soft(y-grad*invL, thr, nonneg)
			ya[j] = y
			aPrev[j] = a[j]
			a[j] = nv
		}
		p, pPrev = pPrev, p
		sparseRowTimes(p, a, g, k)
		fNew := objectiveFrom(a, c0, p, xx, lam)
		tNew := (1 + math.Sqrt(1+4*t*t)) / 2
		if c.cfg.Restart {
			for j := 0; j < k; j++ {
				restartDot += float64(ya[j]-a[j]) * float64(a[j]-aPrev[j])
			}
			if restartDot > 0 {
				t, tNew = 1, 1 // next step starts without momentum
			}
		}
		beta = float32((t - 1) / tNew)
		t = tNew
		done := stopped(f, fNew, c.cfg.Tol)
		f = fNew
		if done {
			conv = true
			break
		}
	}
	// s.p / s.p0 may have been swapped locally; the scratch slices stay valid
	// because both are fully rewritten on every call.
	return iters, f, conv
}

// objectiveFrom returns ½xx − a·c0 + ½a·p + λ||a||₁ where p = G·a, i.e. the
// objective ½||x − Dᵀa||² + λ||a||₁ without forming the residual.
func objectiveFrom(a, c0, p []float32, xx, lam float64) float64 {
	var ac, ap, l1 float64
	for j, v := range a {
		if v == 0 {
			continue
		}
		fv := float64(v)
		ac += fv * float64(c0[j])
		ap += fv * float64(p[j])
		l1 += math.Abs(fv)
	}
	return 0.5*xx - ac + 0.5*ap + lam*l1
}
