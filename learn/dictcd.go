package learn

import "math"

// cdRow runs cyclic coordinate descent on the Gram matrix for one signal
// (Friedman, Hastie & Tibshirani 2010, "covariance updates"). It keeps the
// correlation residual r = c0 − G·a, so coordinate j's exact minimiser is
//
//	a_j ← prox_{λ/G_jj}((r_j + G_jj·a_j) / G_jj)
//
// and a change δ costs one axpy r −= δ·G_j. After a sweep over every atom,
// sweeps visit only the non-zero ones (the active set, as glmnet does) on a
// gathered copy of their rows and columns of G, so each change costs an
// axpy of the active-set size rather than K, until
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
	var m int
	ga, ra, aa, a0 := s.ga, s.ra, s.aa, s.ab
	for iters < c.cfg.MaxIter {
		iters++
		var fNew float64
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
			for j := 0; j < k; j++ {
				if c.cdStep(a, r, g, j, k, lam, nonneg) {
					active = append(active, int32(j))
				}
			}
			fNew = cdObjective(a, c0, r, xx, lam)
		} else {
			if run == 0 {
				// Enter the active phase: gather the active rows and
				// columns of G, so that sweeps touch m-long vectors only.
				m = len(active)
				for i, j := range active {
					row := g[int(j)*k:]
					for l, jj := range active {
						ga[i*m+l] = row[jj]
					}
					ra[i], aa[i], a0[i] = r[j], a[j], a[j]
				}
			}
			for i := 0; i < m; i++ {
				c.cdStep(aa[:m], ra[:m], ga[:m*m], i, m, lam, nonneg)
			}
			fNew = cdObjectiveActive(aa[:m], ra[:m], c0, active, xx, lam)
		}
		done := stopped(f, fNew, c.cfg.Tol)
		f = fNew
		switch {
		case done && full:
			conv = true
			return iters, f, conv
		case !full && (done || run+1 >= maxActiveSweeps):
			// The active set has settled (or float32 noise keeps it from
			// settling to a tiny Tol): write back and check every atom.
			c.leaveActive(a, r, aa[:m], a0[:m], active)
			full, run = true, 0
		case full:
			full, run = false, 0
		default:
			run++
		}
	}
	if !full {
		c.leaveActive(a, r, aa[:m], a0[:m], active)
	}
	s.act = active
	return iters, f, conv
}

// leaveActive scatters the active codes back into a and brings the full
// residual r up to date for their changes since the phase began.
func (c *Coder) leaveActive(a, r, aa, a0 []float32, active []int32) {
	k := c.dict.k
	for i, j := range active {
		if d := aa[i] - a0[i]; d != 0 {
			axpy(-d, c.gram[int(j)*k:(int(j)+1)*k], r)
		}
		a[j] = aa[i]
	}
}

func cdObjectiveActive(aa, ra, c0 []float32, active []int32, xx, lam float64) float64 {
	var q, l1 float64
	for i, v := range aa {
		if v == 0 {
			continue
		}
		fv := float64(v)
		q += fv * (float64(c0[active[i]]) + float64(ra[i]))
		l1 += math.Abs(fv)
	}
	return 0.5*xx - 0.5*q + lam*l1
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
