package eval

// The evaluation job of "striate evaluate": score one model on one test set,
// then (for a report) measure its speed, sweep its robustness, score it on a
// development suite and probe its front end's invariance. A command parses
// flags, calls these steps and prints; the steps never print.

import (
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/internal/safefile"
	"github.com/striate/striate/pipeline"
)

// RobustModes are the names RobustLevels accepts, in the order usage
// messages list them.
var RobustModes = []string{"none", "quick", "full"}

// RobustLevels returns the robustness-sweep levels of a named mode: nil for
// "none" (or ""), QuickLevels for "quick" (3 levels per perturbation),
// StandardLevels for "full" (4-5 levels).
func RobustLevels(mode string) (map[datasets.PerturbKind][]float64, error) {
	switch mode {
	case "", "none":
		return nil, nil
	case "quick":
		return QuickLevels, nil
	case "full":
		return StandardLevels, nil
	}
	return nil, fmt.Errorf("robustness mode %q; want %s", mode, listOr(RobustModes))
}

// SuiteNames are the names NamedSuite accepts, in the order usage messages
// list them.
var SuiteNames = []string{"none", "dev", "mnistc", "grid", "heldout", "all"}

// NamedSuite returns a development suite by name: nil for "none" (or ""),
// datasets.DevelopmentSuite() for "dev" (the 15 MNIST-C corruptions at
// severities 1…5 and the perturbation grid, 131 conditions), the 15 MNIST-C
// corruptions at datasets.PublishedSeverity for "mnistc" (the parameters
// Mu & Gilmer 2019 published), datasets.GridSuite() for "grid",
// datasets.HeldOutSuite() for "heldout" (7 kinds at severities 1…5, never
// used to choose settings) and the development suite followed by the
// held-out one for "all" (166 conditions, what SuiteTargets needs).
func NamedSuite(name string) ([]datasets.SuiteCondition, error) {
	switch name {
	case "", "none":
		return nil, nil
	case "dev":
		return datasets.DevelopmentSuite(), nil
	case "mnistc":
		return datasets.MNISTCSuite(datasets.PublishedSeverity)
	case "grid":
		return datasets.GridSuite(), nil
	case "heldout":
		return datasets.HeldOutSuite()
	case "all":
		h, err := datasets.HeldOutSuite()
		return append(datasets.DevelopmentSuite(), h...), err
	}
	return nil, fmt.Errorf("development suite %q; want %s", name, listOr(SuiteNames))
}

// listOr joins names as "a, b or c".
func listOr(names []string) string {
	if len(names) < 2 {
		return strings.Join(names, "")
	}
	return strings.Join(names[:len(names)-1], ", ") + " or " + names[len(names)-1]
}

// NewReport returns an empty report with title, the creation time and
// command, the command line that produced it, under the garment-sorting
// station's summary.
func NewReport(title, command string) *Report {
	return &Report{
		Title:   title,
		Created: time.Now().UTC(),
		Command: command,
		Summary: "Garment-sorting station at a second-hand clothing depot: how well striate's recognizers tell item types apart, how sure they are, and how they hold up.",
	}
}

// SetProvenance describes test set s for a report; train counts the
// training images, from the set trainName when known ("" and 0 when not).
func SetProvenance(s *datasets.Set, trainName string, train int) Provenance {
	return Provenance{Name: s.Name, Source: s.Source, TrainName: trainName, Train: train, Test: s.N, H: s.H, W: s.W, Classes: s.Classes}
}

// CheckClasses requires the classes of set to be m's, in order.
func CheckClasses(m *pipeline.Model, set *datasets.Set) error {
	if mc := m.Classes(); !slices.Equal(mc, set.Classes) {
		return fmt.Errorf("data %s has classes %v but the model was trained on %v; evaluate on data with the same classes", set.Name, set.Classes, mc)
	}
	return nil
}

// EvaluateConfig configures Evaluate and Evaluation.Report. The zero value
// scores the clean test set only, with RunOptions' defaults.
type EvaluateConfig struct {
	// Levels are the robustness sweep's levels (RobustLevels); nil skips the
	// sweep.
	Levels map[datasets.PerturbKind][]float64
	// Suite is a development suite scored by Evaluate (NamedSuite); empty
	// skips it.
	Suite []datasets.SuiteCondition
	// Peer, when not nil, is attached to the suite result (SuiteResult.SetPeer).
	Peer *PeerFigures
	// Speed measures throughput, latency and peak heap on the first
	// SpeedImages test images.
	Speed bool
	// SpeedImages is the number of images timed; 0 means 2,000.
	SpeedImages int
	// Seed seeds the robustness sweep's perturbations (the suite uses
	// datasets.SuiteSeed, the seed of the peer's figures).
	Seed uint64
	// Run.Workers and Run.Batch are used for every prediction; Run.Progress
	// is ignored (each step reports to the monitor).
	Run RunOptions
}

// Evaluation is one model's scores on one test set.
type Evaluation struct {
	Name    string
	Model   *pipeline.Model
	Set     *datasets.Set
	Data    *Data
	Probs   [][]float32 // class probabilities per test image
	Metrics *Metrics
	Suite   *SuiteResult // nil when EvaluateConfig.Suite is empty
	cfg     EvaluateConfig
	mon     JobMonitor
}

// Evaluate predicts every image of set with m and scores the predictions,
// then scores m on cfg.Suite (with cfg.Peer attached) when it is not empty.
// Progress goes to mon. Evaluation.Report adds the remaining sections. The
// classes of set must be m's (CheckClasses).
func Evaluate(name string, m *pipeline.Model, set *datasets.Set, cfg EvaluateConfig, mon JobMonitor) (*Evaluation, error) {
	if err := CheckClasses(m, set); err != nil {
		return nil, err
	}
	e := &Evaluation{Name: name, Model: m, Set: set, Data: FromSet(set), cfg: cfg, mon: mon}
	run := cfg.Run
	bar := mon.Start(len(e.Data.Images), "predict")
	run.Progress = bar
	var err error
	e.Probs, e.Metrics, err = PredictScore(m, e.Data, run)
	bar.Done()
	if err != nil {
		return nil, err
	}
	if len(cfg.Suite) == 0 {
		return e, nil
	}
	bar = mon.Start(len(cfg.Suite)+1, "suite "+name)
	run.Progress = bar
	e.Suite, err = ScoreSuite(name, m, set, cfg.Suite, SuiteConfig{Run: run})
	bar.Done()
	if err != nil {
		return nil, err
	}
	if cfg.Peer != nil {
		if err := e.Suite.SetPeer(cfg.Peer); err != nil {
			return nil, err
		}
	}
	return e, nil
}

// Report returns the evaluation's report under title: the provenance, the
// scores (with speed when cfg.Speed), the model's configuration, the
// robustness sweep (when cfg.Levels is set), the suite scores and the front
// end's invariance probe with its bank (a note when the front end has no
// probe).
func (e *Evaluation) Report(title, command string) (*Report, error) {
	rep := NewReport(title, command)
	rep.Data = []Provenance{SetProvenance(e.Set, "", 0)}
	mr := ModelResult{Name: e.Name, Data: e.Data.Name, Metrics: e.Metrics}
	if e.cfg.Speed {
		n := e.cfg.SpeedImages
		if n <= 0 {
			n = 2000
		}
		h, w := e.Model.InputSize()
		var err error
		if mr.Speed, err = ModelSpeed(e.Model, e.Data.Images[:min(len(e.Data.Images), n)], h, w, e.cfg.Run.Workers); err != nil {
			return nil, err
		}
	}
	rep.Models = []ModelResult{mr}
	rep.Config = map[string]pipeline.Config{e.Name: e.Model.Config()}
	if e.cfg.Levels != nil {
		rb, err := sweepModel(e.Name, e.Model, e.Data, e.cfg.Levels, e.cfg.Seed, e.cfg.Run, e.mon)
		if err != nil {
			return nil, err
		}
		rep.Robustness = []*Robustness{rb}
	}
	if e.Suite != nil {
		rep.Suites = []*SuiteResult{e.Suite}
	}
	if iv, bank, err := FrontInvariance(e.Name, e.Model); err == nil {
		rep.Invariance = []InvarianceResult{iv}
		rep.Banks = []BankPanel{{Name: e.Name, Bank: bank}}
	} else {
		rep.Notes = append(rep.Notes, "invariance probe skipped: "+err.Error())
	}
	return rep, nil
}

// sweepModel runs the robustness sweep of the standard conditions at levels
// on d, counting conditions on a progress step of mon.
func sweepModel(name string, p Predictor, d *Data, levels map[datasets.PerturbKind][]float64, seed uint64, run RunOptions, mon JobMonitor) (*Robustness, error) {
	conds, err := StandardConditions(levels)
	if err != nil {
		return nil, err
	}
	bar := mon.Start(len(conds), "robustness "+name)
	defer bar.Done()
	run.Progress = bar
	return RobustnessSweep(name, p, d, conds, RobustnessConfig{Seed: seed, Run: run})
}

// PredictShard predicts shard i of n of set with m (the model file
// modelPath, read from the data spec) and writes the shard's probabilities,
// labels and ShardMeta into dir (WriteShard), which it creates. It returns
// the shard's meta. The classes of set must be m's (CheckClasses).
func PredictShard(dir, modelPath, spec string, m *pipeline.Model, set *datasets.Set, i, n int, run RunOptions, mon JobMonitor) (ShardMeta, error) {
	if err := CheckClasses(m, set); err != nil {
		return ShardMeta{}, err
	}
	lo, hi := ShardRange(i, n, set.N)
	h, w := m.InputSize()
	bar := mon.Start(hi-lo, fmt.Sprintf("predict shard %d/%d", i, n))
	run.Progress = bar
	probs, err := Predict(m, FromSet(set).Images[lo:hi], h, w, run)
	bar.Done()
	if err != nil {
		return ShardMeta{}, err
	}
	meta, err := shardMeta("predictions", modelPath, spec, set, i, n, lo, hi, m.NumClasses())
	if err != nil {
		return ShardMeta{}, err
	}
	return meta, writeShardDir(dir, meta, Flatten(probs), set.Labels[lo:hi])
}

// ExtractShard extracts the features of shard i of n of set with m (the
// model file modelPath, read from the data spec) into dir, which it creates:
// with sharded, the shard's files (WriteShard); otherwise, for the whole set
// (i = 0, n = 1), features.npy, labels.npy and extract.json. It returns the
// meta written.
func ExtractShard(dir, modelPath, spec string, m *pipeline.Model, set *datasets.Set, i, n int, sharded bool, batch, workers int, mon JobMonitor) (ShardMeta, error) {
	lo, hi := ShardRange(i, n, set.N)
	bar := mon.Start(hi-lo, "extract")
	feats, err := ExtractRange(m, set, lo, hi, batch, workers, bar)
	bar.Done()
	if err != nil {
		return ShardMeta{}, err
	}
	d := m.FeatureLen()
	meta, err := shardMeta("features", modelPath, spec, set, i, n, lo, hi, d)
	if err != nil {
		return ShardMeta{}, err
	}
	if sharded {
		return meta, writeShardDir(dir, meta, feats, set.Labels[lo:hi])
	}
	if err := os.MkdirAll(dir, safefile.DirPerm); err != nil {
		return ShardMeta{}, err
	}
	if err := WriteArrays(dir, "features", "", feats, d, set.Labels); err != nil {
		return ShardMeta{}, err
	}
	return meta, WriteShardMeta(filepath.Join(dir, "extract.json"), meta)
}

// shardMeta describes images lo…hi-1 of set, shard i of n, with cols values
// per image, from the model file modelPath (whose SHA-256 it records).
func shardMeta(kind, modelPath, spec string, set *datasets.Set, i, n, lo, hi, cols int) (ShardMeta, error) {
	sum, err := FileSHA256(modelPath)
	if err != nil {
		return ShardMeta{}, err
	}
	return ShardMeta{Kind: kind, Model: modelPath, ModelSHA256: sum, Data: set.Name, DataSpec: spec,
		Total: set.N, Shard: i, Shards: n, Lo: lo, Hi: hi, Cols: cols, Classes: set.Classes}, nil
}

// writeShardDir creates dir and writes one shard into it.
func writeShardDir(dir string, meta ShardMeta, flat []float32, labels []int) error {
	if err := os.MkdirAll(dir, safefile.DirPerm); err != nil {
		return err
	}
	return WriteShard(dir, meta, flat, labels)
}

// MergedEvaluation is the result of MergeEvaluation.
type MergedEvaluation struct {
	Name    string // the model's name
	Data    *Data  // name and classes only: the images stay with the shards
	Metrics *Metrics
	Report  *Report
}

// MergeEvaluation merges the prediction shards in dir (MergeShards), scores
// the merged predictions, writes them as predictions.npy and labels.npy
// into dir and returns the scores with their report under the title
// titlePrefix + the model's name. name derives a model's name from its file
// path.
func MergeEvaluation(dir, titlePrefix, command string, name func(path string) string) (*MergedEvaluation, error) {
	mg, err := MergeShards(dir, "predictions")
	if err != nil {
		return nil, err
	}
	meta, rows, labels := mg.Meta, mg.Rows(), mg.Labels
	met, err := Score(labels, rows, meta.Classes, MetricsConfig{})
	if err != nil {
		return nil, err
	}
	me := &MergedEvaluation{Name: name(meta.Model), Data: &Data{Name: meta.Data, Classes: meta.Classes}, Metrics: met}
	if err := WritePredictions(dir, "", rows, labels); err != nil {
		return nil, err
	}
	rep := NewReport(titlePrefix+me.Name, command)
	rep.Data = []Provenance{{Name: meta.Data, Source: meta.DataSpec, Test: len(labels), Classes: meta.Classes,
		Note: fmt.Sprintf("merged from %d shards", mg.Shards)}}
	rep.Models = []ModelResult{{Name: me.Name, Data: meta.Data, Metrics: met}}
	me.Report = rep
	return me, nil
}

// MergeFeatures merges the feature shards in dir (MergeShards) and writes
// them as features.npy, labels.npy and extract.json into dir: byte for byte
// the files of one unsharded ExtractShard.
func MergeFeatures(dir string) (*Merged, error) {
	m, err := MergeShards(dir, "features")
	if err != nil {
		return nil, err
	}
	if err := WriteArrays(dir, "features", "", m.Flat, m.Meta.Cols, m.Labels); err != nil {
		return nil, err
	}
	return m, WriteShardMeta(filepath.Join(dir, "extract.json"), m.Meta)
}
