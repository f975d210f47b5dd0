// Package eval measures fitted recognizers honestly: scores with confidence
// intervals, paired comparisons, robustness and label-efficiency sweeps,
// front-end invariance, speed and memory, and a report with figures.
//
// # What it needs from a recognizer
//
// eval sees a fitted pipeline only through Predictor (class probabilities for
// a batch of h×w grey images in [0,1]), so any two recognizers can be scored
// and compared on the same data. Sweeps that refit take a fit function
// instead of importing the pipeline; front-end measures take an extractor
// function. Data holds a labelled image set.
//
// The steps the command runs on a fitted pipeline.Model (PredictScore,
// ModelSpeed, FrontInvariance, ExtractRange) and the whole main job (MainJob:
// the hand-set and the learned front end trained, scored, swept and compared
// on Fashion-MNIST and MNIST, with progress and result lines through a
// JobMonitor) are the only parts that import package pipeline.
//
// # Shards (ParseShard, ResolveShard, ShardRange, WriteShard, MergeShards)
//
// Long extraction or prediction runs split into n contiguous blocks
// [⌊i·N/n⌋, ⌊(i+1)·N/n⌋) run as independent jobs; each writes NPY arrays and
// a ShardMeta, and MergeShards checks the set is complete and from one model
// file and data set before concatenating, so merged files are byte for byte
// those of one run. Every file is written atomically (internal/safefile).
// ResolveShard also takes "auto" (or "auto/n"): the shard of a Slurm job
// array task (SLURM_ARRAY_TASK_ID with its COUNT, or MIN/MAX/STEP) or of a
// Kubernetes indexed Job's pod (JOB_COMPLETION_INDEX, the count given as n).
//
// # Scores (Score, Metrics)
//
//   - Accuracy with a Wilson score interval (Wilson 1927):
//     centre (k + z²/2)/(n + z²), half-width z/(n + z²)·sqrt(k(n−k)/n + z²/4),
//     z = Φ⁻¹((1+conf)/2). Unlike the Wald interval it stays inside [0,1] and
//     keeps near-nominal coverage at accuracies close to 1.
//   - Precision TP/(TP+FP), recall TP/(TP+FN) and F1 = 2PR/(P+R) per
//     class (0 for an empty denominator), their class mean (equal weight per
//     class) and image-weighted mean (weight = the class's test images), and
//     the confusion matrix C[true][predicted].
//   - Top-k accuracy; log-loss in nats, −(1/N)·Σ ln p̂(yᵢ), probabilities
//     clipped to [1e-15, 1−1e-15] as scikit-learn 1.2 does.
//   - Expected calibration error over 15 equal-width confidence bins
//     (Guo et al. 2017): ECE = Σₘ |Bₘ|/n·|acc(Bₘ) − conf(Bₘ)|, with the
//     reliability bins kept for plotting.
//
// # Paired comparison (Compare)
//
// Two classifiers on the same samples: the exact McNemar test, a two-sided
// binomial test with p = 1/2 on the b + c discordant pairs,
// p = min(1, 2·P(X ≤ min(b,c))), and the accuracy difference with a seeded
// paired bootstrap percentile interval (Efron & Tibshirani 1993).
//
// # Sweeps
//
//   - RobustnessSweep: a model fitted on clean images is scored on perturbed
//     copies of the test set, one Condition at a time (StandardConditions
//     builds the datasets perturbations: noise, blur, contrast, shift,
//     rotation, scale, several levels each). Image i always gets the noise
//     seed mix(Seed, i), so every model sees the same perturbed images.
//   - LabelEfficiency: for k labels per class, a class-balanced subset
//     (datasets.PerClass, nested across k for one seed) is passed to a
//     caller-supplied FitFunc and the result scored on the test set.
//   - Invariance: each channel of a front end (any MapsFunc, such as
//     (*v1layer.FrontEnd).Apply) is probed with full-field gratings
//     I = ½ + ½·C·cos(2π/λ·(x cos θ + y sin θ) + φ). Per channel it reports the
//     correlation of the centre response a quarter cycle of phase apart
//     (0 for a linear cell, 1 for a quadrature-energy cell), the
//     correlation of the whole map under a 1 px shift, and the modulation
//     ratio F1/F0 over a cycle of phase at the preferred grating
//     (Skottun et al. 1991: > 1 simple, < 1 complex; π/2 for a half-wave
//     rectified linear cell).
//
// # Development suite (ScoreSuite)
//
// A model fitted on clean images is scored on the clean test set and on
// test.Perturbed(c.Op, seed, workers) for each condition of a datasets
// development suite: the 15 MNIST-C corruptions (Mu & Gilmer 2019, arXiv:1906.02337) at
// severities 1…5 and the six perturbation kinds on a fine grid of levels.
// The seed defaults to datasets.SuiteSeed, the images the LeNet-5 peer
// script (testdata/peer/lenet5.py) is scored on, and the perturbed images
// do not depend on the number of workers. Per condition c it reports the
// accuracy a_c with its Wilson interval; per kind k (its severities or levels
// L_k) the unweighted mean
//
//	A_k = (1/|L_k|) Σ_{c ∈ L_k} a_c,
//
// the mean corruption accuracy mCA = (1/|K|) Σ_{k ∈ K} A_k over the MNIST-C
// kinds K, and the worst kind argmin_{k ∈ K} A_k (the first on ties). Grid
// kinds give curves of accuracy against level, with the clean accuracy at
// the level that leaves the image unchanged. ReadPeer reads the peer's
// per-condition figures (the mean over its training seeds) and
// SuiteResult.SetPeer aligns them with a result, after checking that the
// peer saw the same seed and every condition.
//
// # Speed and memory (MeasureSpeed, ModelSize)
//
// Throughput in images per second of wall time (median of repeats after a
// warm-up batch), single-image latency quantiles p50/p99, and the peak live
// heap sampled every millisecond through runtime/metrics. Timings are only
// as quiet as the machine: compare figures taken in one run.
//
// # Report (WriteReport)
//
// A Report is plain data. WriteReport writes a folder with report.md (PNG
// figures under figures/), one self-contained report.html with the same
// figures embedded as data: URIs, and results.json with the full precision
// and the full file paths. The report opens with its key figures; tables
// are markdown tables with a single header row, headings in words with
// their units (accuracies in %, differences in percentage points, times in
// seconds), files shown by name (report.html gives the full path as a
// tooltip); figures are drawn with gonum/plot, with
// labelled axes and units: confusion heat maps (row-normalised colour, raw
// counts), per-class F1 bars, reliability diagrams, robustness panels (one
// per perturbation, shared accuracy axis, Wilson error bars), the
// development suite's per-kind bars and grid curves (a peer dashed),
// label-efficiency curves (log axis of labels per class), grating-invariance
// bars and F1/F0, and the filter banks side by side (BankPanel, drawn with
// AtomMosaic) with the Gabor-fit histograms of learned banks.
//
// # Scenes (ScoreScenes)
//
// A scanner's detections in whole frames (Detection: box [x0, y0, x1, y1)
// in pixels, class, score) are scored against the frames' ground truth
// (datasets.SceneItem) by the PASCAL VOC protocol (Everingham et al. 2010):
//
//	IoU(a, b) = area(a ∩ b) / area(a ∪ b),   a match needs IoU ≥ MatchIoU = 0.5
//
// Per class, detections are ranked by score and matched greedily, best
// first, each to the item of its class it overlaps most in its frame if that
// item is still free (a second detection of an item is a false positive).
// Recall rₖ = TPₖ/items and precision pₖ = TPₖ/k after the k-th detection
// give the precision-recall curve and the all-point interpolated AP of VOC
// from 2010 (VOCAP: the area under p_interp(r) = max{p(r′): r′ ≥ r}), and
// its mean over classes (mAP); StepAP is the non-interpolated Σ ΔR·P, which
// equals scikit-learn's average_precision_score on the ranked detections
// times matched/items (scikit-learn cannot see items that were never
// detected). Beside them: pooled precision and recall, count accuracy
// (frames with as many detections as items), recognition accuracy of the
// items found (matching with classes ignored, then the share given the
// right class) and false items per empty frame.
//
// # Scanning files and scene folders (RunScan)
//
// ScanSources expands files and folders into frames; a folder holding
// datasets.SceneIndex is a scene folder, whose frames bring their ground
// truth. RunScan runs a pipeline.Scanner over them: each frame's declared
// size is checked against the scanner's limits (CheckFrameSize: at least
// Scanner.MinSide, at most v1layer.MaxSide a side) and the guarded decoder's
// pixel limit (datasets.MaxImagePixels) before any pixel is decoded; a bad
// plain file is skipped and named, a bad frame of a scene folder stops the
// run before anything is written. Each frame goes out as text (ScanText) or
// a line of JSON (ScanLine: file, size, items with class, score and box
// [x0, y0, x1, y1] in pixels), and, with an output folder, as a picture
// (DrawScan: boxes in class colours, or hits, false items and dashed misses
// on a frame with ground truth; the fixations that gave items numbered and
// joined in order). ScanJob.Report adds the report's scenes section: the
// headline scores, AP per class with mAP, the precision-recall curves and a
// page of hits and misses, frames with errors first.
//
// # Checks against the outside world
//
// The Wilson interval and McNemar p-value equal SciPy 1.10.1's
// scipy.stats.binomtest; confusion matrix, per-class scores, log-loss and
// top-k equal scikit-learn 1.2.1 on a committed prediction file; the ECE is
// checked on a hand-worked example; the bootstrap interval width against the
// normal-theory variance of a paired difference; robustness and
// label-efficiency sweeps against closed-form accuracies (Φ(δ√n/σ) for a
// mean-threshold rule under Gaussian noise, the Bayes limit Φ(Δ/2) for
// nearest-mean classification); the invariance probe against the known F1/F0
// of rectified and energy cells; IoU, the VOC matching, AP and mAP against a
// NumPy port of the VOC2010 devkit (VOCevaldet, VOCap) and the step AP
// against scikit-learn 1.2.1's average_precision_score, besides hand-worked
// examples; the development suite's figures against a predictor right on a
// known subset of every condition's images and hand-worked per-kind means.
// The generator scripts and their values are in testdata/eval/.
//
// # Concurrency
//
// All functions are safe for concurrent use; results are plain values.
// Parallelism inside a Predictor is the predictor's own Workers argument.
// The package never prints; long work reports through Progress.
package eval
