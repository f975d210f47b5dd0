package eval

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/learn"
	"github.com/striate/striate/pipeline"
)

// The plain-text summaries the command prints, for any program that wants
// the same tables on a terminal or in a log. Each writes to w and returns
// the first write error.

// WriteScores writes a model's headline scores on d and its per-class table,
// with the report's labels: the class mean weighs every class equally, "test
// images" counts each class's images.
func WriteScores(w io.Writer, name string, d *Data, m *Metrics) error {
	fmt.Fprintf(w, "%s on %s (%d images): accuracy %.2f%% (95%% CI %.2f-%.2f%%), class-mean F1 %.4f, log-loss %.4f nats, ECE %.4f\n",
		name, d.Name, m.N, 100*m.Accuracy, 100*m.CI.Lo, 100*m.CI.Hi, m.Macro.F1, m.LogLoss, m.ECE)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "class\tprecision\trecall\tF1\ttest images\t")
	for _, c := range m.PerClass {
		fmt.Fprintf(tw, "%s\t%.4f\t%.4f\t%.4f\t%d\t\n", c.Class, c.Precision, c.Recall, c.F1, c.Support)
	}
	fmt.Fprintf(tw, "class mean\t%.4f\t%.4f\t%.4f\t%d\t\n", m.Macro.Precision, m.Macro.Recall, m.Macro.F1, m.N)
	return tw.Flush()
}

// WriteSuite writes a development suite's per-kind accuracy (beside the
// peer's when one is attached), the mean corruption accuracy and the worst
// kind.
func WriteSuite(w io.Writer, r *SuiteResult) error {
	fmt.Fprintf(w, "\ndevelopment suite (%d conditions, suite seed %d): clean accuracy %.2f%%\n", len(r.Points), r.Seed, 100*r.Clean.Accuracy)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	head := "group\tkind\tconditions\taccuracy (%)\t"
	if r.Peer != nil {
		head += r.Peer.Name + " (%)\t"
	}
	fmt.Fprintln(tw, head)
	for _, k := range r.Kinds {
		line := fmt.Sprintf("%s\t%s\t%d\t%.2f\t", k.Group, k.Kind, k.Conditions, 100*k.Accuracy)
		if r.Peer != nil {
			if pk, ok := r.Peer.Kind(k.Group, k.Kind); ok {
				line += fmt.Sprintf("%.2f\t", 100*pk.Accuracy)
			} else {
				line += "—\t"
			}
		}
		fmt.Fprintln(tw, line)
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	if r.CorruptionKinds > 0 {
		fmt.Fprintf(w, "mean corruption accuracy over %d MNIST-C kinds: %.2f%%", r.CorruptionKinds, 100*r.MeanCorruption)
		if r.Peer != nil && r.Peer.CorruptionKinds > 0 {
			fmt.Fprintf(w, " (%s %.2f%%)", r.Peer.Name, 100*r.Peer.MeanCorruption)
		}
		fmt.Fprintln(w)
	}
	if r.HeldOutKinds > 0 {
		fmt.Fprintf(w, "mean accuracy over %d held-out kinds: %.2f%%", r.HeldOutKinds, 100*r.MeanHeldOut)
		if r.Peer != nil && r.Peer.HeldOutKinds > 0 {
			fmt.Fprintf(w, " (%s %.2f%%)", r.Peer.Name, 100*r.Peer.MeanHeldOut)
		}
		fmt.Fprintln(w)
	}
	if r.Worst != nil {
		_, err := fmt.Fprintf(w, "worst kind: %s, %.2f%%\n", r.Worst.Kind, 100*r.Worst.Accuracy)
		return err
	}
	return nil
}

// WriteSummary writes a table of the four splits (Summaries), then a blank
// line.
func (d *MainJobData) WriteSummary(w io.Writer) error {
	fmt.Fprintln(w, "Datasets")
	tw := tabwriter.NewWriter(w, 0, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "  set\tsplit\timages\tsize\tclasses\tsmallest class\tlargest class")
	for _, r := range d.Summaries() {
		s := r.Set
		fmt.Fprintf(tw, "  %s\t%s\t%d\t%d×%d\t%d\t%s (%d)\t%s (%d)\n", s.Name, r.Split, s.N, s.H, s.W,
			len(s.Classes), r.Smallest, r.SmallestN, r.Largest, r.LargestN)
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	_, err := fmt.Fprintln(w)
	return err
}

// WritePhotoSummary writes a table of the embedded photographs: name, size,
// mean grey and licence (shortened to 60 characters), then a blank line.
func WritePhotoSummary(w io.Writer, photos []datasets.Photo) error {
	fmt.Fprintf(w, "Natural photographs for learning filters: %d embedded\n", len(photos))
	tw := tabwriter.NewWriter(w, 0, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "  name\tsize\tmean grey\tlicence")
	for _, p := range photos {
		lic := p.License
		if r := []rune(lic); len(r) > 60 {
			lic = string(r[:57]) + "..."
		}
		fmt.Fprintf(tw, "  %s\t%d×%d\t%.3f\t%s\n", p.Name, p.H, p.W, MeanGrey(p), lic)
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	_, err := fmt.Fprintln(w)
	return err
}

// WriteText writes both models' scores, their paired comparison on the
// clean images and, when under is not empty, the comparisons under
// perturbation (as ModelComparison.Report returns them).
func (mc *ModelComparison) WriteText(w io.Writer, under []*Comparison) error {
	for _, r := range mc.Results {
		if err := WriteScores(w, r.Name, mc.Data, r.Metrics); err != nil {
			return err
		}
	}
	a, b, c := mc.Names[0], mc.Names[1], mc.Clean
	fmt.Fprintf(w, "\n%s − %s: accuracy difference %+.2f points (95%% paired bootstrap %+.2f to %+.2f, %d resamples, seed %d)\n",
		a, b, 100*c.Diff, 100*c.DiffCI.Lo, 100*c.DiffCI.Hi, c.Resamples, c.Seed)
	_, err := fmt.Fprintf(w, "discordant images: %d only %s right, %d only %s right; exact McNemar p = %.4g\n",
		c.OnlyA, a, c.OnlyB, b, c.PValue)
	if len(under) > 0 {
		fmt.Fprintln(w, "\nunder perturbation (same perturbed images for both):")
		for _, u := range under {
			_, err = fmt.Fprintf(w, "  %-14s %s %.2f%%  %s %.2f%%  diff %+.2f (%+.2f to %+.2f)  McNemar p = %.3g\n",
				u.Condition, a, 100*u.AccuracyA, b, 100*u.AccuracyB, 100*u.Diff, 100*u.DiffCI.Lo, 100*u.DiffCI.Hi, u.PValue)
		}
	}
	return err
}

// WriteFitSummary writes what a fit did: the images, features and the time
// of each phase (elapsed is the whole fit as the caller timed it), and the
// learned bank's summary when the bank was learned.
func WriteFitSummary(w io.Writer, train *datasets.Set, rep pipeline.FitReport, elapsed time.Duration) error {
	_, err := fmt.Fprintf(w, "trained on %d images of %s (%d features) in %v: unsupervised %v, features %v, head %v (%d epochs)\n",
		train.N, train.Name, rep.FeatureLen, elapsed.Round(time.Second), rep.Unsupervised.Round(time.Second),
		rep.Features.Round(time.Second), rep.HeadTime.Round(time.Second), rep.Head.Epochs)
	if rep.Bank != nil {
		_, err = fmt.Fprintf(w, "learned bank in %v: %d atoms, %d quadrature pairs, %.0f%% Gabor-like (R² ≥ 0.8)\n",
			rep.BankTime.Round(time.Second), len(rep.Bank.Fits), rep.Bank.Pairs, 100*rep.Bank.FracGaborLike)
	}
	return err
}

// WriteBankSummary writes what learning a photo bank with cfg found: the
// dictionary's size and settings, how many atoms are Gabor-like, their
// orientation quadrants and bandwidths, and the quadrature pairs.
func WriteBankSummary(w io.Writer, cfg learn.PhotoBankConfig, rep *learn.BankReport, elapsed time.Duration) error {
	wh := fmt.Sprintf("whitening %s f0 %g", cfg.Whiten, cfg.F0)
	if cfg.Whiten == "zca" {
		wh = fmt.Sprintf("ZCA ε %g", cfg.ZCAEps)
	}
	d := cfg.Dict
	fmt.Fprintf(w, "learned %d atoms of %d×%d from %d patches (λ %g, %s, %d passes) in %.1fs\n",
		d.Atoms, cfg.PatchSize, cfg.PatchSize, cfg.Patches, d.Lambda, wh, d.Epochs, elapsed.Seconds())
	fmt.Fprintf(w, "Gabor-like (fit R² ≥ %.1f): %d of %d (%.1f%%), median R² %.3f\n",
		learn.GaborLikeR2, rep.GaborLike, len(rep.Fits), 100*rep.FracGaborLike, rep.MedianR2)
	fmt.Fprintf(w, "orientation quadrants 0-45-90-135-180°: %v\n", rep.Quadrants)
	fmt.Fprintf(w, "median SF bandwidth %.2f octaves, median orientation bandwidth %.1f°\n",
		rep.MedianFreqBandwidth, rep.MedianOrientationBandwidth)
	_, err := fmt.Fprintf(w, "quadrature pairs %d, unpaired (rectified) %d\n", rep.Pairs, rep.Unpaired)
	return err
}

// WriteModelInfo writes a model file's header as a person reads it: file,
// format, checksum, input, channels, features, classes and the scan
// section (the stored "no item" threshold) when there is one, the indented
// configuration, and the tensor table (pipeline.InspectFile gives m and
// info).
func WriteModelInfo(w io.Writer, path string, m *pipeline.Model, info *pipeline.FileInfo) error {
	ih, iw := m.InputSize()
	fmt.Fprintf(w, "file          %s\n", path)
	fmt.Fprintf(w, "size          %d bytes\n", info.Size)
	fmt.Fprintf(w, "format        striate-model, version %d (this build writes %d, %d for int8 models, %d with a scan section)\n", info.Version, pipeline.FormatVersion, pipeline.FormatVersionInt8, pipeline.FormatVersionScan)
	fmt.Fprintf(w, "header        %d bytes of JSON\n", len(info.Header))
	fmt.Fprintf(w, "checksum      SHA-256 %x… verified\n", info.Checksum[:8])
	fmt.Fprintf(w, "input         %d×%d grey\n", ih, iw)
	fmt.Fprintf(w, "channels      %d front-end maps\n", len(m.Channels()))
	fmt.Fprintf(w, "features      %d per image\n", m.FeatureLen())
	fmt.Fprintf(w, "classes       %d: %s\n", m.NumClasses(), strings.Join(m.Classes(), ", "))
	if st, ok := m.Scan(); ok {
		fmt.Fprintf(w, "scan          \"no item\" threshold %.4f, chosen on %d validation scenes (%s): F1 %.3f\n", st.Config.Threshold, st.Scenes, st.Source, st.F1)
	}
	var cfg bytes.Buffer
	if err := json.Indent(&cfg, info.Config, "  ", "  "); err == nil {
		fmt.Fprintf(w, "\nconfiguration\n  %s\n", cfg.String())
	}
	fmt.Fprintln(w, "\ntensors")
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "  name\tdtype\tshape\telements\tbytes\toffset")
	var total int64
	for _, t := range info.Tensors {
		dims := make([]string, len(t.Shape))
		for i, d := range t.Shape {
			dims[i] = fmt.Sprint(d)
		}
		fmt.Fprintf(tw, "  %s\t%s\t%s\t%d\t%d\t%d\n", t.Name, t.DType, strings.Join(dims, "×"), t.Elems(), t.Length, t.Offset)
		total += t.Length
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	_, err := fmt.Fprintf(w, "  %d tensors, %d bytes of data\n", len(info.Tensors), total)
	return err
}
