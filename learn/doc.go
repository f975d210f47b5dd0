// Package learn fits everything in striate that is learned from data.
//
// # Sparse coding
//
// A Dictionary holds K unit-norm atoms d_j of dimension Dim, row-major
// (component p of atom j at j*Dim+p; as scikit-learn's components_). The
// code a of a signal x minimises the Lasso objective
//
//	F(a) = ½·||x − Σ_j a_j·d_j||² + λ·||a||₁        (optionally a ≥ 0)
//
// scikit-learn's Lasso writes the same problem as (1/(2n))·||y − Xw||² +
// α·||w||₁ with n the number of rows of X = Dᵀ, so α = λ/Dim; that is also
// what SparseCoder(transform_algorithm='lasso_cd', transform_alpha=λ) does.
//
// A Coder (NewCoder) holds the Gram matrix G = DDᵀ and L ≥ λ_max(G) (power
// iteration on the smaller of DDᵀ and DᵀD, raised by 1e-4 because the
// Rayleigh quotient approaches λ_max from below). Coder.Encode forms the
// correlations D·x of 256 signals at a time with one float32 matrix product
// and then runs, per signal, one of two solvers:
//
//   - FISTA (Beck & Teboulle 2009, SIAM J. Imaging Sci. 2:183-202), step 1/L,
//     optional adaptive restart (O'Donoghue & Candès 2015, Found. Comput.
//     Math. 15:715-732, gradient scheme). Products with G visit only the
//     non-zero code entries, and G·y is formed from G·a_k and G·a_{k-1}, so
//     one sparse product per step yields both the gradient and the
//     objective. Without restart the gap obeys F(a_k) − F* ≤ 2L·||a_0 −
//     a*||²/(k+1)² (their Theorem 4.4), which the tests check.
//   - CD, cyclic coordinate descent on G with the correlation residual
//     r = D·x − G·a kept up to date (Friedman, Hastie & Tibshirani 2010,
//     J. Stat. Softw. 33(1), "covariance updates"), the method of
//     scikit-learn's lasso_cd. On 16×16 natural patches with 256 atoms it
//     is the faster encoder (see the benchmarks), and the default inside
//     dictionary learning.
//
// Both stop a signal when the relative change of F between iterations is at
// most Tol, or after MaxIter iterations; warm starts take the previous
// codes from dst. Results do not depend on Workers.
//
// # Dictionary learning
//
// DictConfig.Fit is the online block-coordinate method of Mairal, Bach,
// Ponce & Sapiro (2009, "Online learning for matrix factorization and
// sparse coding", JMLR 11:19-60) with minibatches: code a minibatch with the
// current atoms, accumulate A = Σ a·aᵀ and B = Σ a·xᵀ with the forgetting
// factor of their §3.4.2 (as scikit-learn 1.2), then update each atom in turn,
//
//	d_j ← d_j + (b_j − Σ_l A_jl·d_l)/A_jj,   d_j ← d_j/||d_j||,
//
// keeping atoms on the unit sphere (the unit-norm atoms of the protocol;
// Mairal et al. project onto the unit ball, which these atoms reach anyway
// when λ > 0). Initial atoms are distinct random training signals; the
// shuffle order is drawn per pass from a PCG seeded by Seed. A fit is
// deterministic: the same data, config and Seed give the same bits for any
// Workers. CheckpointEvery/OnCheckpoint hand out a DictCheckpoint (atoms,
// A, B, random state, epoch order) that Save writes in a small checksummed
// little-endian format and LoadDictCheckpoint reads back with sizes checked
// before allocation; Resume then finishes the fit bit-identically.
//
// # Gabor fits and learned banks
//
// FitGabor fits g = A·exp(−x'²/(2σx²) − y'²/(2σy²))·cos(2π·x'/λ − ψ) with
// x' along the carrier direction θ (x right, y up: v1layer's convention) by
// variable projection (amplitude and phase solved linearly; Golub & Pereyra
// 1973) and Levenberg–Marquardt on centre, θ, frequency and log-σ, from five
// starts seeded by the patch's DFT peak and energy moments. R² = 1 −
// SS_res/SS_tot. Bandwidths follow from the Gabor's Gaussian spectrum: the
// half-amplitude half-width is Δf = sqrt(2 ln 2)/(2πσ), so the spatial-
// frequency bandwidth is log2((f+Δf)/(f−Δf)) octaves with σ = σx (the
// relation behind scikit-image's gabor_kernel bandwidth, checked in the
// tests) and the orientation bandwidth 2·atan(Δf⊥/f) with σ = σy. Macaque
// V1 for comparison: median orientation bandwidth ≈ 40° (De Valois, Yund &
// Hepler 1982, Vision Res. 22:531-544), spatial-frequency bandwidth ≈ 1.4
// octaves (Foster, Gaska, Nagler & Pollen 1985, J. Physiol. 365:331-363;
// both figures as recalled, from memory).
//
// LearnedBank turns atoms into v1layer kernels (even sizes padded to odd,
// shifted half a pixel toward the fitted centre), with Kind KindLearned
// and the fit in the metadata, and pairs quadrature partners by fitted
// orientation (≤ 15° apart), wavelength (≤ 25%), phase (90° ± 30°) and
// centre (≤ max σx apart), greedily by ascending normalised cost. Unpaired
// atoms get Pair = −1 and v1layer rectifies them. The atoms act on whitened
// patches; in a front end the DoG retina plays the part of the whitening.
//
// # Concurrency
//
// Dictionary, Coder and the banks are immutable after construction and
// safe for concurrent use. Config structs are plain values. Nothing in the
// package prints; long fits report through Progress.
package learn
