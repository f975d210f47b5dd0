// Package v1layer is striate's fixed V1-like front end: a retina / LGN
// stage of centre-surround differences of Gaussians, a bank of Gabor simple
// cells (or any bank of kernels, such as one learned by package learn), and
// complex cells built from them — quadrature energy, optional length
// summation, end-stopping and divisive normalisation, and max pooling over
// position and scale. It does no I/O, no learning and no printing.
//
// # Data layout
//
// Input images are float32, row-major h×w, values in [0,1]. Output is a
// Maps (C×OH×OW channel-major); Channels describes every output channel
// (kind, orientation, phase, wavelength, polarity, scale).
//
// # Coordinates
//
// Kernels are applied as CORRELATION (no flip):
//
//	out(y,x) = Σ_{v=−r..r} Σ_{u=−r..r} k[v+r][u+r]·img(y+v, x+u)
//
// with u the column offset (rightwards) and v the row offset (downwards).
// Angles use the image y axis pointing up (y = −v), counter-clockwise from
// +x. These are the conventions of the reference work
// internal/benchwork/data/filterbank.json.
//
// # Retina / LGN: difference of Gaussians
//
// Centre-surround receptive fields (Rodieck 1965; Enroth-Cugell & Robson
// 1966), modelled as a difference of Gaussians:
//
//	Gc(u,v) = exp(−(u²+v²)/2σc²)/Σ,  Gs likewise with σs = ratio·σc,
//	k = Gc − Gs,  k /= ||k||₂,  support r = ceil(3σs)
//
// Both Gaussians are normalised to sum 1 over the same square support, so
// Σk = 0 and a uniform field gives zero response. ratio = 1.6 approximates
// the Laplacian of Gaussian (Marr & Hildreth 1980). The response r is
// half-wave rectified into an on-centre channel max(0,r) and an off-centre
// channel max(0,−r) (or kept signed). Optional local contrast normalisation
// divides by a Gaussian-weighted local RMS plus a constant:
//
//	n(x) = r(x) / (ε + sqrt(Σ_x' G_σ(x−x')·r(x')²))
//
// # Simple cells: Gabor bank
//
// Daugman (1985)'s form, a Gaussian envelope times a sinusoidal carrier:
//
//	x' = x cosθ + y sinθ,  y' = −x sinθ + y cosθ   (x = u, y = −v)
//	env = exp(−(x'² + γ²y'²)/2σ²),  car = cos(2π x'/λ − ψ)
//	k = env·(car − c),  c = Σ env·car / Σ env   (zero mean, envelope kept)
//	k /= ||k||₂
//
// θ is the carrier direction (θ = 0: vertical stripes, responding to
// vertical edges and bars), λ the wavelength in pixels, ψ the phase (0 even
// / cosine, π/2 odd / sine; four polarities add π and 3π/2), γ the aspect
// ratio. σ follows from the half-amplitude spatial-frequency bandwidth b in
// octaves:
//
//	σ/λ = (1/π)·sqrt(ln2/2)·(2^b+1)/(2^b−1)    (b=1: 0.5622; b=1.5: 0.3924)
//
// Scales are octave-spaced, λ_s = λ₀·2^s; the square support has radius
// r = ceil(3σ/min(γ,1)).
//
// # Complex cells
//
// Quadrature energy of an even/odd pair (Adelson & Bergen 1985):
// C = sqrt(e² + o²), invariant to the phase of a grating. Optional length
// summation and end-stopping along the preferred orientation (the bar axis
// d_θ = (−sinθ, cosθ)) — see LengthConfig and EndStopConfig for the
// formulas (double-stopped operator after Heitger et al. 1992). Optional
// divisive normalisation (Heeger 1992) across the orientations of one
// scale: N_i = C_i / sqrt(σ² + mean_j C_j²). Order: energy, length
// summation, divisive normalisation, end-stopping, then pooling.
//
// Max pooling over position: P(i,j) = max over the window of side Size
// centred at (s·i, s·j), clipped to the image; output ceil(H/s)×ceil(W/s).
// With Pool.Scales it is also a max over the scales of channels that differ
// only in scale.
//
// # Borders and sizes
//
// Border zero reads 0 outside the image; Border reflect mirrors it about
// the edge including the edge pixel (d c b a | a b c d, scipy.ndimage's
// "reflect"). Output maps have the input's size before pooling. An input
// side must be at least r_max+1, the radius of the largest kernel plus one
// (15 px for the default bank, whose largest kernel is 29×29): below that a
// reflected border would need more than one reflection and the receptive
// field of the coarsest cell would not even reach across the image. This
// is deliberately looser than "at least the kernel size": the reference
// work itself applies the 29×29 kernels to 28×28 MNIST digits.
//
// # Speed: how the correlations run
//
// New factors every kernel by singular value decomposition,
// K = Σ_i σ_i·u_i·v_iᵀ, keeping terms with σ_i > 1e-6·σ_1 (separable.go
// gives the error bound), and runs each rank-1 term as two 1-D passes over
// a pre-padded plane: 2s instead of s² multiply-adds per pixel and term.
// DoG kernels have rank 2, Gabors at 0° and 90° rank 1, at 45° and 135°
// rank 2 (odd) or 3 (even). Within each kernel size the planner chooses,
// by exhaustive search over row-first/column-first per kernel, the
// directions that let kernels share first passes (the 0° even/odd pair
// shares its vertical envelope, 90° its horizontal one, 45°/135° their
// singular vectors): the reference bank needs 18 first passes and 32
// second passes, 1,052 multiply-adds per pixel against 9,090 for direct
// correlation. A kernel whose rank makes 2·rank·s ≥ s² (a full-rank
// learned atom) runs as a direct 2-D correlation instead: one horizontal
// pass per kernel row over the padded rows, summed in registers (s²
// multiply-adds per pixel; BenchmarkDirect, 24 learned-style 9×9 kernels:
// 8.8× (28×28) and 15× (64×64) faster in the SIMD build than the scalar
// row-AXPY loops it replaced, 2.4× and 2.8× in the plain build).
// FFT correlation was costed and not used: gonum's real 2-D FFT of
// 256×256 takes ~1.2 ms each way (the reference work, internal/benchwork), and the
// reference bank would need one forward and nine inverse transforms
// (even+i·odd pairs), ~12 ms, against ~6 ms for the separable passes.
//
// The SIMD inner loops compute whole blocks of outputs per row into
// buffers with slack columns whose values are never used: 48 outputs
// (six independent accumulators, enough to hide the FMA latency and the
// most Go's register allocation keeps without spilling), then 32, 16, 8;
// images at most 32 wide (MNIST) run three rows × 16 at once for the same
// six chains. On CPUs with AVX-512 the single-row blocks run 16 lanes
// (96 outputs, then 64, 32, 16). The loops are bound by loads more than by
// multiply-adds, so two passes that read the same planes the same way (two
// horizontal first passes over the image; the 0° or 90° even/odd pair,
// the 45°/135° even pair and the odd pair in their second passes) run as
// one pass in which each loaded vector feeds both sums, bit for bit the
// result of the two passes. Taps are stored pre-broadcast to 16 lanes and
// walked by pointer, so every load has a constant offset. With a zero border, vertical taps that would read only rows
// outside the image are skipped (about a quarter of the vertical work of
// the 29-tap kernels at 28×28). After AVX code the loops clear the upper
// halves of the Y registers: Go 1.26 does not, and the SSE moves it uses
// for struct copies elsewhere then stall (measured: 28×28 at half speed).
//
// With the reference pooling (3×3, stride 2) and no stage that needs
// whole maps (contrast or divisive normalisation, length summation,
// end-stopping), rectification and energy are fused into the pooling
// (poolfused.go): max commutes with max(0,·), negation and sqrt, so each
// output map is pooled straight from the responses, bit for bit the same.
// Then, for images taller than 30 rows, each kernel size's second passes
// run 30 rows at a time into band buffers that are pooled at once
// (band.go), so that the responses stay in the core's caches instead of
// streaming 18 maps of 256 KB (at 256×256) out to memory and back.
//
// # Builds
//
// The plain build runs portable Go loops. Built with Go 1.26's
// GOEXPERIMENT=simd on amd64, the package uses simd/archsimd (AVX2 + FMA,
// 8 float32 lanes, and AVX-512 with 16 lanes for the wide 1-D passes) for
// the 1-D passes, energy and pooling, when the CPU has them (checked at
// start-up; Build reports which loops run):
//
//	GOEXPERIMENT=simd go build ./cmd/striate
//	GOEXPERIMENT=simd go test -bench FrontEnd ./v1layer
//
// The SIMD loops that differ only in lane width (8 or 16), in the number
// of vectors or rows per block, in the number of filter sets (the paired
// passes) or in the element-wise operation are generated, not written by
// hand: internal/simdgen holds the list of variants and one text/template
// (simd.tmpl), and gen_simd.go writes conv_gen_amd64.go and
// elementwise_gen_amd64.go, gofmt'ed and marked "DO NOT EDIT". Each
// variant stays a separate concrete function, as archsimd needs for its
// intrinsics. After editing the template or the list, regenerate with
//
//	go generate ./v1layer
//
// (plain Go; no GOEXPERIMENT needed); TestGeneratedSIMDCurrent fails
// while the committed files differ from the generator's output.
//
// Both builds give the same results to float32 rounding
// (TestSIMDMatchesPortable); `striate bench` prints which build timed the
// figures it shows (the measured figures are in the README).
//
// # Concurrency
//
// New returns an immutable *FrontEnd safe for concurrent use. Apply takes
// a per-call scratch from a pool and allocates nothing once scratch for the
// image size exists; ApplyBatch spreads images over a given number of
// goroutines, each with its own scratch.
package v1layer

//go:generate go run gen_simd.go
