package learn

import "math"

// cdRow runs cyclic coordinate descent on the Gram matrix for one signal
// (Friedman, Hastie & Tibshirani 2010, "covariance updates"). It keeps the
// correlation residual r = c0 − G·a, so coordinate j's exact minimiser is
//
//	a_j ← prox_{λ/G_jj}((r_j + G_jj·a_j) / G_jj)
//
// and a change δ costs one axpy r −= δ·G_j. After a sweep over every atom,
// sweeps visit only the non-zero ones (the active set, as glmnet does) until
// the objective F = ½xx − ½a·(c0 + r) + λ||a||₁ settles by the relative-change
// rule of FISTA; a signal stops when a full sweep also meets the rule. Each
// sweep, full or active, counts as one iteration.
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
	active := s.act[:0]
	full := true
	run := 0   // active sweeps since the last full one
	fulls := 0 // full sweeps so far
	for iters < c.cfg.MaxIter {
		iters++
		if full {
			fulls++
			if fulls%refreshEvery == 0 {
				// Refresh r = c0 − G·a: incremental float32 updates drift
				// when many sweeps run to a tiny Tol.
				copy(r, c0)
				for j, v := range a {
					if v != 0 {
						axpy(-v, g[j*k:(j+1)*k], r)
					}
				}
			}
			active = active[:0]
			lam32 := float32(lam)
			for j := 0; j < k; j++ {
				// A zero coordinate stays zero unless |r_j| > λ (r_j > λ
				// for non-negative codes): skip it without the step.
				if rj := r[j]; a[j] == 0 && rj <= lam32 && (nonneg || rj >= -lam32) {
					continue
				}
				if c.cdStep(a, r, g, j, k, lam, nonneg) {
					active = append(active, int32(j))
				}
			}
		} else {
			for _, j := range active {
				c.cdStep(a, r, g, int(j), k, lam, nonneg)
			}
		}
		// Every non-zero coordinate is in the active set (only active
		// coordinates move between full sweeps), so the objective sums
		// over it, in ascending order as a scan of a would.
		fNew := cdObjectiveOn(active, a, c0, r, xx, lam)
		done := stopped(f, fNew, c.cfg.Tol)
		f = fNew
		switch {
		case done && full:
			conv = true
			return iters, f, conv
		case done || run >= maxActiveSweeps:
			// the active set has settled (or float32 noise keeps it from
			// settling to a tiny Tol): check every atom again
			full, run = true, 0
		default:
			full = false
			run++
		}
	}
	s.act = active
	return iters, f, conv
}

// maxActiveSweeps bounds the active-set sweeps between full sweeps, so
// that atoms outside the active set are revisited even when rounding keeps
// the objective changing by more than a very small Tol.
const maxActiveSweeps = 10

// refreshEvery is how many full sweeps pass between exact recomputations of
// the residual correlations. Rarely enough that sweeps can still reach an
// exact float32 fixed point (change 0) in between.
const refreshEvery = 16

// cdStep minimises over coordinate j and reports whether a_j ≠ 0 after it.
func (c *Coder) cdStep(a, r, g []float32, j, k int, lam float64, nonneg bool) bool {
	gjj := g[j*k+j]
	old := a[j]
	nv := soft(r[j]+gjj*old, float32(lam), nonneg) / gjj
	if nv != old {
		axpy(old-nv, g[j*k:(j+1)*k], r)
		a[j] = nv
	}
	return nv != 0
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

// cdObjectiveOn is cdObjective summed over the coordinates in idx
// (ascending), which must include every non-zero of a.
func cdObjectiveOn(idx []int32, a, c0, r []float32, xx, lam float64) float64 {
	var q, l1 float64
	for _, j := range idx {
		v := a[j]
		if v == 0 {
			continue
		}
		fv := float64(v)
		q += fv * (float64(c0[j]) + float64(r[j]))
		l1 += math.Abs(fv)
	}
	return 0.5*xx - 0.5*q + lam*l1
}
