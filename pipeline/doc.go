// Package pipeline joins striate's stages into one recognizer that a Go
// program can fit, save, load and call, and is the package to import when
// striate is used as a feature extractor.
//
// # Stages
//
// A pipeline is an ordered list of stages, described by a Config. NewPlan
// resolves a Config once into a Plan: every zero field takes its documented
// default field by field (a field set by hand never changes what another
// zero field means), every stage's configuration is checked, learn's
// template, head and dictionary configurations included, and the shapes
// after each stage are worked out. An error names the bad field by its JSON
// path and gives the valid values ("pipeline: templates[0].method "kmeanz":
// want "kmeans" or "sparse""). ParseConfig, LoadConfig and Validate run the
// same checks; Fit (NewPlan then Plan.Fit) and Load build the plan a model
// then runs. Every image goes through the plan's one stage path, whether it
// comes to Fit, Extract, Predict, their batch forms or Accuracy:
//
//	input      any image.Image → grey, BT.601 luma Y = 0.299R + 0.587G + 0.114B
//	           (ITU-R BT.601), in [0,1] → resized to Input.Height×Input.Width
//	           (datasets.ToGray; bilinear, x/image/draw) → 3×3 median filter,
//	           once or twice, then grey-level coring, on images whose
//	           estimated noise level calls for it (Input.Denoise "auto", or
//	           "smooth" with a strength varying continuously with it; see
//	           below) → min-max stretch v' = (v − min)/(max − min) →
//	           [deskew: shear removing the slant μ11/μ02, Input.Deskew] →
//	           integer shift putting the centre of mass at the centre (LeCun
//	           et al. 1998) → [upright: turn a tilted, elongated shape so its
//	           principal axis is vertical, Input.Upright]
//	front      v1layer.FrontEnd: on/off DoG retina, simple cells (hand-set
//	           Gabor bank, or a bank learned from photos by sparse coding:
//	           LearnBank), complex cells, local max pooling → C×H×W maps
//	templates  (optional) templates learned without labels over patches of the
//	           complex-cell maps, encoded convolutionally, pooled over position
//	pool       grid pooling of the front end's maps: mean or max of Size×Size
//	           windows of each map, optionally square-rooted; the features
//	           without templates, appended to them unless Pool.Keep is false
//	guard      drop features whose training std is below Guard.MinStd × the
//	           median std, clip the rest to their training [min, max]
//	head       learn.Head: softmax regression or a one-hidden-layer ReLU MLP on
//	           standardised features z = (x − mean)/std
//
// The default (Config{}, spelled out by DefaultConfig): 28×28 input with
// noise-adaptive median filtering, min-max stretch and centring, v1layer's default front end (on/off DoG at
// σ = 1, 2 px; Gabor energy at 4 orientations, λ = 4, 8 px; 3×3 max pooling,
// stride 2 → 12×14×14 maps), 64 k-means templates over 5×5 patches pooled on
// a 2×2 grid plus the maps average-pooled 2×2, the guard at MinStd 0.05, and
// a 512-unit MLP trained 15 epochs with Adam and a cosine schedule on all
// labelled images (no validation hold-out; see DefaultHead for the figures
// behind that choice).
//
// The input stage's noise estimate is σ̂ = median|d|/0.6745 over the
// diagonal Haar coefficients d of the image's 2×2 blocks (Donoho &
// Johnstone 1994, Biometrika 81:425-455; 0.6745 is the normal distribution's
// 0.75 quantile). Smooth content gives d ≈ 0, so on clean MNIST σ̂ is 0 for
// every test image and on clean Fashion-MNIST below 0.06 for 99% of them:
// the filter, which costs about 0.6 points of clean MNIST accuracy when
// always on, is then never applied. Thresholds and how they were chosen (on
// training images only) are in input.go.
//
// # What each input step is robust to, and why
//
// A step that only reads a statistic off the image, rather than a level
// fixed in advance, carries over to conditions nobody tuned it at:
//
//   - Min-max stretch: any global change of contrast or brightness that
//     keeps black below white (an affine map of the grey levels) is undone
//     exactly. It does not help against a change confined to part of the
//     image (fog, a stripe inverted).
//   - Centring on the centre of mass (Center "mass"; LeCun et al. 1998):
//     any translation of an item that stays inside the frame is undone to
//     within half a pixel. Stray mass away from the item — a line, specks,
//     a blob — pulls it. Center "robust" takes the centre of mass of the 3×3
//     grey opening (Serra 1982, Image Analysis and Mathematical Morphology),
//     in which every bright structure narrower than 3 px is gone, so lines
//     and specks crossing or beside the item do not move it.
//   - Noise estimate (Donoho & Johnstone 1994): the median of the finest
//     diagonal wavelet coefficients is insensitive to the item's edges
//     (few coefficients) and follows additive noise of any level; the
//     median passes and the coring width k·σ̂ follow it.
//   - Smooth median strength (Denoise "smooth"): the number of median
//     passes is a continuous, non-decreasing function of σ̂ (the straight
//     line through the middle of each of "auto"'s steps, a fraction of a
//     pass blending the images on either side), so images whose noise
//     levels are close are filtered almost alike. On a 28×28 image σ̂ is
//     the median of 196 coefficients, with a sampling error of about 8% of
//     σ̂ (1.166/√196 for Gaussian noise), ±0.01 near "auto"'s thresholds:
//     there two images of one noise level fall on either side of a step at
//     random and are filtered differently, and the head sees the jump. It
//     is the argument for soft over hard thresholding of wavelet
//     coefficients (Donoho 1995, IEEE Trans. Inf. Theory 41:613-627; Bruce
//     & Gao 1996, Biometrika 83:727-745: a rule that jumps in the data has
//     the larger variance near its threshold), carried over to the choice
//     of filter strength. It changes nothing where the noise level is far
//     from the steps (clean images, heavy noise).
//   - Area opening and closing (Denoise "adaptive"; Vincent 1993, with the
//     union-find algorithm of Meijster & Wilkinson 2002): every bright or
//     dark connected detail of fewer than a few pixels goes, whatever its
//     contrast, so salt-and-pepper impulses and the dashes of a dotted line
//     are removed, while the contour of every larger structure stays
//     exactly where it was (a connected filter; Salembier & Serra 1995). The
//     filter is defined by a size, not by a noise level, so it needs no
//     threshold on σ̂. Detail of an item that a corruption has broken into
//     fragments smaller than the threshold (strong shot noise, an edge map)
//     is removed too.
//   - Deskewing (moments; LeCun et al. 1998) and the upright turn (Hu 1962)
//     undo a shear or a tilt of the whole item.
//
// # Presets
//
// Preset("digits") and Preset("garments") are DefaultConfig with the few
// settings that depend on what the images show: handwriting is deskewed
// (slant is the writer's, not the class's); garments, shoes and bags are
// learned and predicted together with their mirror images (Config.Mirror),
// pooled maps are square-rooted, and tilted upright shapes are turned
// upright. Both were chosen on validation images from the training splits;
// the package's long tests train MNIST with "digits" and Fashion-MNIST with
// "garments".
//
// Fit fits the unsupervised stages first, on unlabeled images (FitOptions.
// Unlabeled, or training images with their labels ignored), so that
// label-efficiency results stay honest; then it extracts the features of
// every training image and fits the head on them.
//
// # Using a fitted model
//
//	m, err := pipeline.LoadFile("mnist.striate")
//	feat := m.Extract(img)             // []float32 of length m.FeatureLen()
//	class, probs := m.Predict(img)     // index into m.Classes()
//	probs2, err := m.PredictBatch(imgs, 28, 28, runtime.GOMAXPROCS(0))
//	feats, err := m.ExtractBatch(imgs, 28, 28, runtime.GOMAXPROCS(0))
//
// ExtractBatch and PredictBatch take grey float images (as datasets.Set.Float
// gives them); ExtractImages and PredictImages take image.Image values, as
// Extract and Predict do. PredictBatch has the signature of eval.Predictor.
// Images of any size are resized to the model's input size. Run-time
// choices (workers, progress) are arguments or FitOptions, never part of a
// Config, so a model file holds only what defines the model.
//
// # Concurrency
//
// A *Model is immutable after Fit or Load returns: all its methods may run
// concurrently from any number of goroutines. Each call takes its scratch
// (maps, features) from a sync.Pool. Batch methods spread images over the
// given number of goroutines; every image's result is independent of how
// the work was divided, so results do not depend on Workers.
//
// # Determinism
//
// Every fitted stage draws its randomness from a seed derived from
// Config.Seed (SplitMix64, Steele, Lea & Flood 2014) unless the stage names
// its own. The same Config and data give a bit-identical model file on the
// same architecture, whatever FitOptions.Workers is.
//
// # Memory budget
//
// A plan knows, from its shapes alone, the bytes of buffers it will need:
// PredictWork for one Extract or Predict call, FitWork for a fit on a given
// number of rows and unlabeled images (front-end maps, each template layer's
// patch, response and feature matrices, stacked layers' maps, the template
// fit's sample, the training features, the head's weights). NewPlan,
// ParseConfig, Load and Fit refuse a configuration whose work size is above
// Limits.MaxWorkBytes (default DefaultMaxWorkBytes, 4 GiB) with a
// *WorkSizeError naming the largest parts and the fields that drive them;
// NewPlanLimits, ParseConfigLimits, LoadLimits and FitOptions.Limits raise
// the limit on purpose. The limit is a run-time option, never saved.
//
// # Model files
//
// Save writes striate's own format, version FormatVersion:
//
//	"STRIATEM" | uint32 version | uint32 header length H | H bytes of JSON
//	| zero padding to a multiple of 8 | tensors, little-endian | SHA-256
//
// The JSON header holds the Config, the class names, and for every tensor its
// name, dtype, shape, offset and length; tensors are stored back to back in
// header order. Format version 2 differs from version 1 only in how the
// configuration reads (version 1 filled the head's and the pool's defaults
// per whole struct); Load reads both, spelling a version-1 configuration out
// so that the model predicts as before, and Save writes version 2. Load reads
// the file in one pass and checks, in order: magic (from the first 8 bytes),
// format version (an unknown version says which versions this build reads),
// header length against MaxHeaderBytes, the header's strict JSON, every
// tensor's rank, dimensions and element count against MaxRank, MaxDim and
// MaxTensorElems, the file length the header implies (against the file's
// size when it has one), the work size of the header's configuration
// against the memory budget and the tensor table against what its stages
// can hold; only then does it stream the payload through the SHA-256 in
// chunks, then check the checksum and that every float32 is finite, and
// rebuild the stages; nothing in a file is ever executed. Every failure is a
// *FileError whose Kind (ErrTruncated,
// ErrChecksum, ...) can be tested with errors.Is and whose message gives the
// byte offset or field. Files are portable across architectures: the layout
// is fixed little-endian, and a model saved on amd64 predicts the same
// classes on arm64 (features agree to float32 rounding, not bit for bit,
// because arm64 fuses multiply-adds).
//
// # Integer inference
//
// Model.Quantize turns a fitted model into an int8 one (Jacob et al. 2018;
// see learn's doc and quant.go): the input stage and the front end stay
// float32, the template layer, the guard and the head run in integers,
// with activation scales calibrated on training images. Save writes it as
// format version 3 (FormatVersionInt8), whose integer section replaces the
// float template and head tensors; float models keep version 2, so older
// readers still read them, and reject version 3 as written by a newer
// striate. Load and LoadFile read both. The integer logits are the same on
// every architecture for the same front-end maps (TestCrossArchInt8).
//
// A model may also carry a scan section (Model.WithScan, Model.Scan): the
// Scanner's "no item" threshold chosen on validation scenes of the
// training split and the scan settings it was chosen with. Save writes such
// a model as format version 4 (FormatVersionScan, float or int8), with the
// section under the header key "scan", decoded strictly and checked as
// NewScanner checks a ScanConfig; models without one keep version 2 or 3,
// so older readers still read them, and reject version 4 as written by a
// newer striate. NewScanner takes the stored threshold as the default of a
// zero ScanConfig.Threshold.
package pipeline
