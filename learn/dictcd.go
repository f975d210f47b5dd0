package learn

import "math"

// cdRow runs cyclic coordinate descent on the Gram matrix for one signal
// (Friedman, Hastie & Tibshirani 2010, "covariance updates"). It keeps the
// correlation residual r = c0 − G·a, so coordinate j's exact minimiser is
//
//	a_j ← prox_{λ/G_jj}((r_j + G_jj·a_j) / G_jj)
//
// and a change δ costs one axpy r −= δ·G_j. One sweep visits every atom;
// the objective F = ½xx − ½a·(c0 + r) + λ||a||₁ is checked after each sweep
// with the same relative-change rule as FISTA.
func (c *Coder) cdRow(s *scratch, a, c0 []float32, xx float64) (iters int, obj float64, conv bool) {
	k := c.dict.k
	g := c.gram
	lam := c.cfg.Lambda
	nonneg := c.cfg.NonNeg
	r := s.r
	if nonneg {
		for j, v := range a {
			if v < 0 {
				a[j] = 0
			}
		}
	}
	copy(r, c0)
	for j, v := range a {
		if v != 0 {
			axpy(-v, g[j*k:(j+1)*k], r)
		}
	}
	f := cdObjective(a, c0, r, xx, lam)
	for iters < c.cfg.MaxIter {
		iters++
		for j := 0; j < k; j++ {
			gjj := g[j*k+j]
			old := a[j]
			v := r[j] + gjj*old
			nv := soft(v, float32(lam), nonneg) / gjj
			if nv != old {
				axpy(old-nv, g[j*k:(j+1)*k], r)
				a[j] = nv
			}
		}
		fNew := cdObjective(a, c0, r, xx, lam)
		done := stopped(f, fNew, c.cfg.Tol)
		f = fNew
		if done {
			conv = true
			break
		}
	}
	return iters, f, conv
}

func cdObjective(a, c0, r []float32, xx, lam float64) float64 {
	var q, l1 float64
	for j, v := range a {
		if v == 0 {
			continue
		}
		fv := float64(v)
		q += fv * (float64(c0[j]) + float64(r[j]))
		l1 += math.Abs(fv)
	}
	return 0.5*xx - 0.5*q + lam*l1
}
