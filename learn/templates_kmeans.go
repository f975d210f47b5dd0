package learn

import (
	"fmt"
	"math"
	"math/rand/v2"

	"github.com/striate/striate/learn/internal/nn"
	"gonum.org/v1/gonum/mat"
)

// fitWhitening returns the mean μ of the n rows of X (dim columns) and the
// ZCA whitening matrix W = U·diag(1/sqrt(λ_i + ε))·Uᵀ of their covariance
// Σ = (X − μ)ᵀ(X − μ)/n = U·diag(λ)·Uᵀ, with ε = eps·mean(λ) (Bell &
// Sejnowski 1997 call this the zero-phase whitening filter; the ε
// regularisation follows Coates & Ng 2011). eps < 0 gives W = I.
//
// team (nil: the caller alone) runs the covariance's block products; the
// result does not depend on its size.
func fitWhitening(X []float32, n, dim int, eps float64, team *nn.Team) (mean, W []float32, err error) {
	mu := make([]float64, dim)
	for i := 0; i < n; i++ {
		for j, v := range X[i*dim : (i+1)*dim] {
			mu[j] += float64(v)
		}
	}
	mean = make([]float32, dim)
	for j := range mu {
		mu[j] /= float64(n)
		mean[j] = float32(mu[j])
	}
	W = make([]float32, dim*dim)
	if eps < 0 {
		for i := 0; i < dim; i++ {
			W[i*dim+i] = 1
		}
		return mean, W, nil
	}
	cov := covariance(X, n, dim, mu, team)
	var es mat.EigenSym
	if !es.Factorize(cov, true) {
		return nil, nil, fmt.Errorf("learn: template fit: the eigendecomposition of the %d×%d patch covariance did not converge", dim, dim)
	}
	vals := es.Values(nil)
	var u mat.Dense
	es.VectorsTo(&u)
	var meanEig float64
	for i, v := range vals {
		if v < 0 {
			vals[i] = 0 // rounding of a positive semi-definite matrix
		}
		meanEig += vals[i]
	}
	meanEig /= float64(dim)
	e := eps * meanEig
	if e <= 0 {
		e = 1e-12
	}
	// W = U·diag(s)·Uᵀ.
	us := mat.NewDense(dim, dim, nil)
	for i := 0; i < dim; i++ {
		for j := 0; j < dim; j++ {
			us.Set(i, j, u.At(i, j)/math.Sqrt(vals[j]+e))
		}
	}
	var w mat.Dense
	w.Mul(us, u.T())
	for i := 0; i < dim; i++ {
		for j := 0; j < dim; j++ {
			// Symmetrise exactly so that t·W and W·t agree bit for bit.
			W[i*dim+j] = float32((w.At(i, j) + w.At(j, i)) / 2)
		}
	}
	return mean, W, nil
}

// applyWhitening sets dst (n×dim) = (X − 1·μᵀ)·W, in blocks of
// whitenChunk rows spread over team (nil: the caller alone); every block
// writes its own rows, so the result does not depend on the team's size.
func applyWhitening(dst, X []float32, n, dim int, mean, W []float32, team *nn.Team) {
	bufs := newBufs(team, min(n, whitenChunk)*dim)
	team.Run((n+whitenChunk-1)/whitenChunk, func(u int) {
		r0, r1 := u*whitenChunk, min(n, (u+1)*whitenChunk)
		buf := bufs.get()
		defer bufs.put(buf)
		b := buf[:(r1-r0)*dim]
		for i := r0; i < r1; i++ {
			src, d := X[i*dim:(i+1)*dim], b[(i-r0)*dim:(i-r0+1)*dim]
			for j, v := range src {
				d[j] = v - mean[j]
			}
		}
		gemmNT(dst[r0*dim:r1*dim], b, W, r1-r0, dim, dim) // W symmetric: b·Wᵀ = b·W
	})
}

// whitenChunk is the row block of applyWhitening, covariance and the
// k-means assignment step.
const whitenChunk = 1024

// bufs hands out scratch slices of one length, one per goroutine of a team
// at a time.
type bufs chan []float32

func newBufs(team *nn.Team, size int) bufs {
	b := make(bufs, team.Workers())
	for i := 0; i < team.Workers(); i++ {
		b <- make([]float32, size)
	}
	return b
}

func (b bufs) get() []float32  { return <-b }
func (b bufs) put(s []float32) { b <- s }

// covariance returns the dim×dim covariance (1/n)·Σ_i (x_i − μ)(x_i − μ)ᵀ of
// the n rows of X. Blocks of whitenChunk rows are centred, transposed and
// multiplied in float32 with gemmNT (the SIMD kernel in the simd build);
// the block products are summed in float64, so the rounding error is that
// of a whitenChunk-term float32 sum (~1e-6 relative), not of an n-term one.
// The products of team.Workers() blocks at a time run on team (nil: the
// caller alone) and are summed in block order, so the result does not
// depend on the team's size.
func covariance(X []float32, n, dim int, mu []float64, team *nn.Team) *mat.SymDense {
	acc := make([]float64, dim*dim)
	b := min(n, whitenChunk)
	w := team.Workers()
	xt := make([][]float32, w)
	prod := make([][]float32, w)
	for i := range xt {
		xt[i] = make([]float32, dim*b)
		prod[i] = make([]float32, dim*dim)
	}
	blocks := (n + whitenChunk - 1) / whitenChunk
	for g0 := 0; g0 < blocks; g0 += w {
		g1 := min(blocks, g0+w)
		team.Run(g1-g0, func(u int) {
			r0 := (g0 + u) * whitenChunk
			r1 := min(n, r0+whitenChunk)
			m := r1 - r0
			t := xt[u]
			for i := r0; i < r1; i++ {
				for j, v := range X[i*dim : (i+1)*dim] {
					t[j*m+i-r0] = float32(float64(v) - mu[j])
				}
			}
			gemmNT(prod[u], t[:dim*m], t[:dim*m], dim, dim, m)
		})
		for u := 0; u < g1-g0; u++ {
			for i, v := range prod[u] {
				acc[i] += float64(v)
			}
		}
	}
	cov := mat.NewSymDense(dim, nil)
	inv := 1 / float64(n)
	for i := 0; i < dim; i++ {
		for j := i; j < dim; j++ {
			// Average the two triangles so the result is exactly symmetric.
			cov.SetSym(i, j, (acc[i*dim+j]+acc[j*dim+i])/2*inv)
		}
	}
	return cov
}

type kmeansResult struct {
	centroids []float32 // k×dim, unit norm
	assign    []int     // final assignment of each row (to the returned centroids' predecessors)
	empty     int
	objective []float64
}

// unitRows scales each row of X (dim columns) to unit L2 norm in place;
// zero rows stay zero.
func unitRows(X []float32, dim int) {
	for i := 0; i+dim <= len(X); i += dim {
		row := X[i : i+dim]
		var s float64
		for _, v := range row {
			s += float64(v) * float64(v)
		}
		if s == 0 {
			continue
		}
		inv := 1 / math.Sqrt(s)
		for j, v := range row {
			row[j] = float32(float64(v) * inv)
		}
	}
}

// sphericalKMeans clusters the directions of the n rows of X: rows and the
// initial centroids init (k×dim) are scaled to unit norm, then each of iters
// iterations assigns every row to the centroid of largest cosine (ties to the
// lower index) and replaces each centroid by the normalised mean of its rows
// (Dhillon & Modha 2001, "Concept decompositions for large sparse text data
// using clustering", §3). On unit-norm data with unit-norm centroids the
// assignment equals Euclidean k-means' (||x − c||² = 2 − 2·x·c), which is how
// it is checked against scikit-learn. A centroid left without rows is
// re-seeded with a random row drawn from rng. X is not modified.
//
// team (nil: the caller alone) runs the assignment step in blocks of
// whitenChunk rows and the centroid sums in column ranges; every row's
// assignment and every sum is computed as on one goroutine, in the same
// order, so the result does not depend on the team's size.
func sphericalKMeans(X []float32, n, dim, k, iters int, init []float32, rng *rand.Rand, progress Progress, team *nn.Team) kmeansResult {
	Xn := append([]float32(nil), X...)
	unitRows(Xn, dim)
	C := append([]float32(nil), init...)
	unitRows(C, dim)
	res := kmeansResult{assign: make([]int, n)}
	bufs := newBufs(team, min(n, whitenChunk)*k)
	bestv := make([]float32, n) // each row's largest cosine
	acc := make([]float64, k*dim)
	count := make([]int, k)
	// Column ranges of the centroid sums, one per worker, whole cache lines.
	cols := (dim + team.Workers() - 1) / team.Workers()
	cols = (cols + 7) &^ 7
	for it := 0; it < iters; it++ {
		team.Run((n+whitenChunk-1)/whitenChunk, func(u int) {
			r0, r1 := u*whitenChunk, min(n, (u+1)*whitenChunk)
			buf := bufs.get()
			defer bufs.put(buf)
			s := buf[:(r1-r0)*k]
			gemmNT(s, Xn[r0*dim:r1*dim], C, r1-r0, k, dim)
			for i := r0; i < r1; i++ {
				row := s[(i-r0)*k : (i-r0+1)*k]
				best := 0
				for j, v := range row {
					if v > row[best] {
						best = j
					}
				}
				res.assign[i] = best
				bestv[i] = row[best]
			}
		})
		var obj float64
		for _, v := range bestv {
			obj += float64(v)
		}
		res.objective = append(res.objective, obj/float64(n))
		clear(count)
		for _, a := range res.assign {
			count[a]++
		}
		team.Run((dim+cols-1)/cols, func(u int) {
			j0, j1 := u*cols, min(dim, (u+1)*cols)
			for a := 0; a < k; a++ {
				clear(acc[a*dim+j0 : a*dim+j1])
			}
			for i, a := range res.assign {
				dst := acc[a*dim+j0 : a*dim+j1]
				for j, v := range Xn[i*dim+j0 : i*dim+j1] {
					dst[j] += float64(v)
				}
			}
		})
		for j := 0; j < k; j++ {
			cj := C[j*dim : (j+1)*dim]
			if count[j] == 0 {
				res.empty++
				copy(cj, Xn[rng.IntN(n)*dim:])
				continue
			}
			a := acc[j*dim : (j+1)*dim]
			var s float64
			for _, v := range a {
				s += v * v
			}
			if s == 0 {
				res.empty++
				copy(cj, Xn[rng.IntN(n)*dim:])
				continue
			}
			inv := 1 / math.Sqrt(s)
			for i, v := range a {
				cj[i] = float32(v * inv)
			}
		}
		if progress != nil {
			progress.Step(it+1, iters, fmt.Sprintf("k-means mean cosine %.4f", obj/float64(n)))
		}
	}
	res.centroids = C
	return res
}
