package learn

import (
	"fmt"
	"math"
	"sync"
)

// Solver names a sparse-coding algorithm.
type Solver string

const (
	// FISTA is the accelerated proximal-gradient method of Beck & Teboulle
	// (2009) with step 1/L, L = λ_max(DDᵀ); see fista.go.
	FISTA Solver = "fista"
	// CD is cyclic coordinate descent on the Gram matrix (Friedman, Hastie &
	// Tibshirani 2010), the method behind scikit-learn's lasso_cd; see dictcd.go.
	CD Solver = "cd"
)

// CoderConfig holds the settings of a sparse coder. The zero value codes
// with FISTA, λ = 1, at most 1000 iterations, relative tolerance 1e-6, no
// restart, signed codes, one worker.
type CoderConfig struct {
	// Lambda is the L1 weight λ in 0.5·||x − Dᵀa||² + λ·||a||₁; 0 means 1.
	Lambda float64 `json:"lambda"`
	// Solver is FISTA (default, "") or CD.
	Solver Solver `json:"solver"`
	// MaxIter caps iterations (FISTA steps or CD sweeps) per signal; 0 means 1000.
	MaxIter int `json:"max_iter"`
	// Tol stops a signal when |F_{k-1} − F_k| ≤ Tol·|F_k| for its objective
	// F; 0 means 1e-6, a negative value disables the rule (run MaxIter).
	Tol float64 `json:"tol"`
	// Restart enables adaptive restart of the FISTA momentum (gradient
	// scheme of O'Donoghue & Candès 2015). Ignored by CD.
	Restart bool `json:"restart"`
	// NonNeg constrains codes to a ≥ 0.
	NonNeg bool `json:"nonneg"`
	// Workers is the number of goroutines over signals; 0 means 1.
	Workers int `json:"workers,omitempty"`
}

func (c CoderConfig) withDefaults() CoderConfig {
	if c.Lambda == 0 {
		c.Lambda = 1
	}
	if c.Solver == "" {
		c.Solver = FISTA
	}
	if c.MaxIter == 0 {
		c.MaxIter = 1000
	}
	if c.Tol == 0 {
		c.Tol = 1e-6
	}
	if c.Workers <= 0 {
		c.Workers = 1
	}
	return c
}

func (c CoderConfig) validate() error {
	if !(c.Lambda > 0) || math.IsInf(c.Lambda, 0) {
		return cfgErr(c, "Lambda", "%v; want a finite λ > 0 (0 means the default 1)", c.Lambda)
	}
	if c.Solver != FISTA && c.Solver != CD {
		return cfgErr(c, "Solver", "%q; want %q or %q", c.Solver, FISTA, CD)
	}
	if c.MaxIter < 0 {
		return cfgErr(c, "MaxIter", "%d; want ≥ 1 (0 means the default 1000)", c.MaxIter)
	}
	if math.IsNaN(c.Tol) {
		return cfgErr(c, "Tol", "is NaN; want a number (negative disables the rule)")
	}
	return nil
}

// Coder computes sparse codes of signals under a fixed dictionary. Build it
// with NewCoder; it holds the Gram matrix G = DDᵀ and the Lipschitz constant
// L of the data term's gradient, and is safe for concurrent use.
type Coder struct {
	cfg  CoderConfig
	dict *Dictionary
	gram []float32 // K×K, G[i*K+j] = ⟨atom_i, atom_j⟩
	lip  float64
}

// NewCoder validates cfg and precomputes the Gram matrix and L for d.
func NewCoder(d *Dictionary, cfg CoderConfig) (*Coder, error) {
	if d == nil {
		return nil, fmt.Errorf("learn: NewCoder needs a dictionary; got nil")
	}
	cfg = cfg.withDefaults()
	if err := cfg.validate(); err != nil {
		return nil, err
	}
	k := d.k
	g := make([]float32, k*k)
	gramInto(g, d.w, k, d.dim)
	return &Coder{cfg: cfg, dict: d, gram: g, lip: lipschitz(d)}, nil
}

// Config returns the configuration with defaults filled in.
func (c *Coder) Config() CoderConfig { return c.cfg }

// Lipschitz returns L, the bound on λ_max(DDᵀ) used for the FISTA step 1/L.
func (c *Coder) Lipschitz() float64 { return c.lip }

// Dictionary returns the coder's dictionary.
func (c *Coder) Dictionary() *Dictionary { return c.dict }

// EncodeStats summarises one Encode call.
type EncodeStats struct {
	Signals     int     // signals coded
	Iterations  int     // FISTA steps or CD sweeps, summed over signals
	MaxIter     int     // largest count for one signal
	Unconverged int     // signals that stopped at MaxIter
	Objective   float64 // sum of the final objectives
	NonZeros    int     // non-zero code entries
}

func (s *EncodeStats) add(o EncodeStats) {
	s.Signals += o.Signals
	s.Iterations += o.Iterations
	s.MaxIter = max(s.MaxIter, o.MaxIter)
	s.Unconverged += o.Unconverged
	s.Objective += o.Objective
	s.NonZeros += o.NonZeros
}

// MeanObjective returns Objective/Signals (0 for no signals).
func (s EncodeStats) MeanObjective() float64 {
	if s.Signals == 0 {
		return 0
	}
	return s.Objective / float64(s.Signals)
}

// chunkRows is the number of signals whose correlations with the atoms are
// formed by one matrix product; 256 rows keep a chunk's scratch in L2.
const chunkRows = 256

// Encode codes the n = len(x)/Dim signals in x (row-major) and returns
// their codes in dst (n×K row-major), reusing dst when it is long enough.
// With warm set, dst must already hold n×K starting codes (for instance the
// codes of the same signals under a slightly older dictionary); otherwise
// coding starts from zero. Results do not depend on Workers.
//
// It returns an error if x holds a non-finite value, and panics if len(x) is
// not a multiple of Dim or warm is set and len(dst) ≠ n×K.
func (c *Coder) Encode(dst, x []float32, warm bool) ([]float32, EncodeStats, error) {
	dim, k := c.dict.dim, c.dict.k
	if len(x)%dim != 0 {
		panic(fmt.Sprintf("learn: Encode got %d values, not a multiple of the dimension %d", len(x), dim))
	}
	n := len(x) / dim
	for i, v := range x {
		if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
			return dst, EncodeStats{}, fmt.Errorf("learn: Encode signal %d component %d is %v; want finite values", i/dim, i%dim, v)
		}
	}
	if warm {
		if len(dst) != n*k {
			panic(fmt.Sprintf("learn: warm Encode needs %d starting codes (%d signals × %d atoms); got %d", n*k, n, k, len(dst)))
		}
	} else {
		if cap(dst) < n*k {
			dst = make([]float32, n*k)
		}
		dst = dst[:n*k]
		clear(dst)
	}
	chunks := (n + chunkRows - 1) / chunkRows
	stats := make([]EncodeStats, chunks)
	workers := min(c.cfg.Workers, chunks)
	if workers <= 1 {
		s := c.newScratch()
		for ch := 0; ch < chunks; ch++ {
			stats[ch] = c.encodeChunk(s, dst, x, ch)
		}
	} else {
		var wg sync.WaitGroup
		next := make(chan int, chunks)
		for ch := 0; ch < chunks; ch++ {
			next <- ch
		}
		close(next)
		for w := 0; w < workers; w++ {
			wg.Add(1)
			go func() {
				defer wg.Done()
				s := c.newScratch()
				for ch := range next {
					stats[ch] = c.encodeChunk(s, dst, x, ch)
				}
			}()
		}
		wg.Wait()
	}
	var total EncodeStats
	for _, s := range stats {
		total.add(s) // fixed order: the float sum does not depend on scheduling
	}
	return dst, total, nil
}

// scratch is one worker's buffers.
type scratch struct {
	corr             []float32 // chunkRows×K correlations D·x
	a0, p, p0, r, ya []float32 // per-row vectors of length K
	act              []int32   // CD's active set
}

func (c *Coder) newScratch() *scratch {
	k := c.dict.k
	buf := make([]float32, 5*k)
	return &scratch{corr: make([]float32, chunkRows*k),
		a0: buf[0:k], p: buf[k : 2*k], p0: buf[2*k : 3*k], r: buf[3*k : 4*k], ya: buf[4*k : 5*k],
		act: make([]int32, 0, k)}
}

func (c *Coder) encodeChunk(s *scratch, dst, x []float32, ch int) EncodeStats {
	dim, k := c.dict.dim, c.dict.k
	n := len(x) / dim
	lo, hi := ch*chunkRows, min((ch+1)*chunkRows, n)
	m := hi - lo
	corr := s.corr[:m*k]
	gemmNT(corr, x[lo*dim:hi*dim], c.dict.w, m, k, dim)
	var st EncodeStats
	for i := 0; i < m; i++ {
		xi := x[(lo+i)*dim : (lo+i+1)*dim]
		var xx float64
		for _, v := range xi {
			xx += float64(v) * float64(v)
		}
		a := dst[(lo+i)*k : (lo+i+1)*k]
		var it int
		var obj float64
		var conv bool
		switch c.cfg.Solver {
		case CD:
			it, obj, conv = c.cdRow(s, a, corr[i*k:(i+1)*k], xx)
		default:
			it, obj, conv = c.fistaRow(s, a, corr[i*k:(i+1)*k], xx)
		}
		st.Signals++
		st.Iterations += it
		st.MaxIter = max(st.MaxIter, it)
		if !conv {
			st.Unconverged++
		}
		st.Objective += obj
		for _, v := range a {
			if v != 0 {
				st.NonZeros++
			}
		}
	}
	return st
}

// soft is the proximal map of t·|·| (and of t·|·| plus the indicator of
// [0,∞) when nonneg is set): sign(v)·max(|v|−t, 0).
func soft(v, t float32, nonneg bool) float32 {
	switch {
	case v > t:
		return v - t
	case v < -t && !nonneg:
		return v + t
	}
	return 0
}

// stopped reports whether the relative objective change meets tol.
func stopped(prev, cur, tol float64) bool {
	return tol >= 0 && math.Abs(prev-cur) <= tol*math.Abs(cur)
}

// lipschitz returns L ≥ λ_max(DDᵀ) by power iteration on the smaller of the
// two Gram matrices (DᵀD, Dim×Dim, has the same non-zero eigenvalues). The
// Rayleigh quotient approaches λ_max from below, so the estimate is raised by
// lipMargin to keep the step 1/L safe.
func lipschitz(d *Dictionary) float64 {
	k, dim := d.k, d.dim
	// Work in float64 on M = DᵀD (dim×dim) when dim ≤ k, else on G = DDᵀ.
	nm := min(k, dim)
	m := make([]float64, nm*nm)
	if dim <= k {
		for j := 0; j < k; j++ {
			row := d.w[j*dim : (j+1)*dim]
			for p := 0; p < dim; p++ {
				vp := float64(row[p])
				if vp == 0 {
					continue
				}
				mp := m[p*dim : (p+1)*dim]
				for q, vq := range row {
					mp[q] += vp * float64(vq)
				}
			}
		}
	} else {
		for i := 0; i < k; i++ {
			for j := 0; j < k; j++ {
				var s float64
				for p := 0; p < dim; p++ {
					s += float64(d.w[i*dim+p]) * float64(d.w[j*dim+p])
				}
				m[i*k+j] = s
			}
		}
	}
	v := make([]float64, nm)
	w := make([]float64, nm)
	for i := range v {
		v[i] = 1 + 0.01*float64(i%7) // fixed start: results are reproducible
	}
	var lam float64
	for it := 0; it < lipMaxIter; it++ {
		var nv float64
		for _, x := range v {
			nv += x * x
		}
		nv = math.Sqrt(nv)
		for i := range v {
			v[i] /= nv
		}
		var rq float64
		for i := 0; i < nm; i++ {
			var s float64
			row := m[i*nm : (i+1)*nm]
			for j, x := range v {
				s += row[j] * x
			}
			w[i] = s
			rq += s * v[i]
		}
		v, w = w, v
		if it > 0 && math.Abs(rq-lam) <= lipTol*rq {
			lam = rq
			break
		}
		lam = rq
	}
	return lam * (1 + lipMargin)
}

const (
	lipMaxIter = 5000 // power-iteration cap; the top of DDᵀ is usually well separated
	lipTol     = 1e-12
	// lipMargin raises the power-iteration estimate so that L ≥ λ_max even
	// when the iteration stops short (it converges from below).
	lipMargin = 1e-4
)
