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
//     J. Stat. Softw. 33(1), "covariance updates"; sweeps over the active
//     set between full sweeps, as glmnet does), the method of
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
// factor of their §3.4.2 (by default scikit-learn 1.2's schedule; with
// DictConfig.Forget = ρ > 0, β_t = (1 − n_t/N_t)^ρ with N_t the signals
// coded so far, which on the bench protocol converges several times
// faster), then update each atom in turn,
//
//	d_j ← d_j + (b_j − Σ_l A_jl·d_l)/A_jj,   d_j ← d_j/||d_j||,
//
// (the rows B − A·D of 16 atoms at a time by one matrix product, then the
// in-block corrections for atoms already updated: the same Gauss–Seidel
// sweep), keeping atoms on the unit sphere (the unit-norm atoms of the protocol;
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
// # How it is checked
//
// Codes are checked against scikit-learn 1.2.1's Lasso on committed
// problems (codes, objective and KKT conditions), FISTA's gap against the
// Beck–Teboulle bound, and the learned atoms of natural images
// (TestNaturalImageAtoms: patches of the shipped photos whitened by
// f·exp(−(f/0.25)⁴)) against the Gabor-likeness, orientation coverage and
// bandwidths reported for macaque V1 and for sparse coding (Olshausen &
// Field 1996); the head's gradients against gorgonia. BenchmarkDictProtocol
// and BenchmarkEncodeHeldout time the shared speed protocol
// (internal/benchwork) beside scikit-learn's figures; the measured figures
// are in the README.
//
// # Concurrency
//
// Dictionary, Coder and the banks are immutable after construction and
// safe for concurrent use. Config structs are plain values. Nothing in the
// package prints; long fits report through Progress.
//
// # Template layer (templates*.go)
//
// TemplateConfig.Fit learns K templates from C×p×p patches of complex-cell
// maps (v1layer.Maps) of unlabeled images, following the single-layer
// recipe of Coates, Lee & Ng (2011, AISTATS) and Coates & Ng (2012,
// "Learning feature representations with k-means"):
//
//   - sample Patches patches (seeded, uniform over maps and positions);
//     index (c·p + dy)·p + dx;
//   - normalise each: x̂ = (x − mean x)/sqrt(var x + ε), ε = NormEps × the
//     mean patch variance (mean and variance over all C·p·p values);
//   - centre and ZCA-whiten: u = W(x̂ − μ), W = U·diag(1/sqrt(λ_i + ε_z))·Uᵀ
//     from the covariance eigen-decomposition, ε_z = WhitenEps × mean λ;
//   - learn unit-norm templates t_k in whitened space, either by spherical
//     k-means (Dhillon & Modha 2001: assign to the largest cosine, centroid =
//     normalised mean; on unit vectors this is Euclidean k-means, which is
//     how it is tested against scikit-learn's KMeans) or as the atoms of a
//     sparse-coding dictionary (DictConfig, Method "sparse").
//
// Encode applies the templates at every position (step Stride) of the maps.
// The whitening is folded into the filters (F = T·W, so r_k = F_k·(x̂ − μ) is
// one GEMM of the im2col patch matrix), then a non-linearity:
//
//	soft:     f_k⁺ = max(0, r_k − α), f_k⁻ = max(0, −r_k − α)   (2K features)
//	          α = Alpha × RMS(r) over the training patches
//	triangle: z_k = ||u/||u|| − t_k||, f_k = max(0, mean_j z_j − z_k)   (K features)
//
// (Coates, Lee & Ng 2011, §3; sparse-code atoms with a soft-threshold
// encoder is the combination Coates & Ng 2011 (ICML) found nearly as good as
// full sparse inference, at a fraction of the cost.) The position features
// are pooled (max or average) over each g×g grid of Grids, a spatial pyramid,
// and, when Scales lists several factors, the maps are resampled bilinearly
// to each scale and the pooled vectors are max-pooled over scale. Output
// layout: grid by grid in config order, then feature f, cell row gy, cell
// column gx at offset_g + (f·g + gy)·g + gx; OutLen(c, h, w) gives the
// length and checks the shape once. EncodeMaps returns the unpooled feature
// maps (optionally MapPool-max-pooled), which a second TemplateConfig can be
// fitted on: layers stack.
//
// Measured (BenchmarkTemplatesEncode, 12×14×14 maps, p = 5, one calling
// goroutine, 2-core EPYC under other load): K = 64 soft 0.50 ms per map
// (0 allocations), K = 128 soft 1.2 ms, with two scales 1.9 ms, triangle
// 5.2 ms (it needs the whitened patch explicitly: one more dim×dim GEMM).
//
// # Integer inference (int8*.go)
//
// Templates.Quantize and Head.Quantize give the integer forms of a template
// layer (soft encoder) and a head, after Jacob et al. 2018 (CVPR,
// "Quantization and training of neural networks for efficient
// integer-arithmetic-only inference"): r = S·(q − Z) for every tensor
// (eq. 1); int8 weights, symmetric per output channel (scale
// max|w|/127); uint8 activations whose scale and zero point span the range
// seen on calibration data (min/max, §3); int32 accumulation with the zero
// points folded into sums and biases (eq. 7); requantisation by a
// fixed-point multiplier M = 2^(−n)·M0, M0 ∈ [0.5, 1) held in 31 bits
// (eqs. 5-6), rounding half away from zero. The template layer's per-patch
// normalisation is integer too: the patch mean acts as a zero point, and
// 1/sqrt(var + ε) is an exact integer square root and a 62-bit reciprocal
// (QuantTemplates). Products run two int8 rows per 64-bit multiply
// (portable; exact while n·255·127 < 2^31) or as int16 pair products in
// AVX2 (SIMD build); both give the same integers. The results depend only on
// the stored integers and scales, not on the architecture. Checked against
// float64 evaluations of the same equations (int8_test.go).
//
// # Supervised head (head*.go, internal/nn)
//
// HeadConfig.Fit trains a multinomial logistic regression ("softmax") or a
// one-hidden-layer ReLU network ("mlp") on standardised features
// z = (x − mean)/std (population std over the training rows; a constant
// feature gets std 1), minimising
//
//	L = −(1/B) Σ_i log softmax(W·z_i + b)_{y_i} + (λ/2) Σ ||W||²_F
//
// over minibatches (weights only in the penalty; with n training rows this
// is scikit-learn's LogisticRegression objective with C = 1/(λ·n), which the
// tests reproduce to 2e-7). Optimisers: Adam (Kingma & Ba 2015, β = 0.9,
// 0.999, ε = 1e-8) or SGD with momentum, constant or cosine learning rate.
// A seeded fraction ValFrac of the rows is held out; after every epoch the
// validation cross-entropy is measured, the best epoch's weights are kept,
// and training stops after Patience epochs without improvement. Weights:
// zero for softmax, He-normal for the ReLU layer. The minibatch order of
// epoch e is a permutation seeded by (Seed, e), so a HeadCheckpoint (weights,
// optimiser moments, early-stopping state, history) is all a resumed run
// needs to end bit-identical to an uninterrupted one. With ConvergeTol > 0
// training also stops once the training loss has levelled off: the
// relative-reduction test of L-BFGS-B (Byrd, Lu, Nocedal & Zhu 1995) on the
// means of two consecutive windows of epoch-mean losses (see
// HeadConfig.ConvergeTol); the report says which rule ended a run.
//
// Gradients come from learn/internal/nn, the only importer of gorgonia:
// Engine "gorgonia" builds gorgonia's graph once per fit and differentiates
// it symbolically (checked against central finite differences in float64);
// Engine "go" (the default) is a hand-written backward pass on float32
// products, checked against gorgonia's gradients, and is faster because it
// skips the input gradient and gorgonia's per-op allocations. Every product
// is one c = a·bᵀ call (forward passes, dA) or one c = a·b call (weight
// gradients dW = dZᵀ·X, reading the minibatch where it lies): the package's
// AVX2/FMA kernels in the GOEXPERIMENT=simd build, gonum's blas32
// elsewhere, always on the calling goroutine. The SIMD kernels pack the
// second operand into 16-column panels and run them against six rows of
// the first at a time in an assembly tile that holds the 6×16 result in
// twelve registers (dictkernel_simd_amd64.s; the archsimd tiles spend more
// instructions on register moves than on multiply-adds), in blocks of rows
// that stay in the L2 cache. Each output element is one chain of fused
// multiply-adds in the order of the inner index, whichever tile computes
// it, so neither the tiling nor the minibatch chunks below move a bit. The
// Adam update and the L2 term run on 8 lanes in the same build, with the
// scalar loops' operations in the scalar order.
//
// A step runs on HeadFitOptions.Workers goroutines. The work is cut into
// units fixed by the data and the config, never by the worker count, and
// every unit writes its own outputs: minibatch rows are standardised in
// blocks of 16; the minibatch is split into ⌈B/32⌉ (at most 8) row chunks
// that run the forward pass and back-propagate to the hidden layer; the
// mlp's first-layer gradient is computed per block of 128 hidden units over
// the whole batch; the other gradients are summed from the chunks' shares
// in chunk order; the optimiser updates the parameters in fixed ranges. A
// fit is therefore bit-identical for any Workers and any GOMAXPROCS, and a
// step allocates nothing. BenchmarkHeadFit times a fit of the full-MNIST
// head's size with 1 and 2 workers.
//
// A fitted *Head is immutable and safe for concurrent use. Inference does
// not touch gorgonia: the standardisation is folded into the first layer and
// Predict/PredictBatch run one GEMV/GEMM per layer on float32 slices
// (Predict allocates nothing given dst and scratch). Tensors/NewHeadFromTensors
// export and rebuild the parameters (head.mean, head.std, then head.w/head.b
// or head.w1, head.b1, head.w2, head.b2; matrices out×in).
package learn
