package eval

import (
	"fmt"
	"io"
	"math"

	"github.com/striate/striate/datasets"
)

// Robustness targets of the project (issue 12), checked by SuiteTargets.
const (
	// TargetMeanMargin is how far the mean over a suite's kinds must lie
	// above the peer's: 5 points.
	TargetMeanMargin = 0.05
	// TargetCleanMNIST and TargetCleanFashion are the clean test accuracies
	// today's presets must keep.
	TargetCleanMNIST   = 0.994
	TargetCleanFashion = 0.923
)

// CleanTarget returns the clean-accuracy target of a dataset named as
// striate's --data takes it ("mnist", "fashion"), and false for others.
func CleanTarget(data string) (float64, bool) {
	switch data {
	case "mnist":
		return TargetCleanMNIST, true
	case "fashion":
		return TargetCleanFashion, true
	}
	return 0, false
}

// TargetRow is one checked target: striate's figure, the figure it must
// reach and whether it does.
type TargetRow struct {
	Name   string  `json:"name"`   // "mnist-c fog", "grid rot-35", "mean over 15 MNIST-C kinds", "clean"
	Rule   string  `json:"rule"`   // "≥ LeNet-5", "≥ LeNet-5 + 5", "≥ 99.40%"
	Value  float64 `json:"value"`  // striate's accuracy
	Target float64 `json:"target"` // the accuracy it must reach
	Met    bool    `json:"met"`
}

// SuiteTargets checks r, scored on the development suite followed by the
// held-out suite (NamedSuite "all") with a peer attached, against the
// project's robustness targets: every MNIST-C kind (its mean over the
// severities) and every grid level at least the peer's mean of seeds; the
// mean over the MNIST-C kinds at least the peer's + TargetMeanMargin; the
// clean accuracy at least clean (CleanTarget); and, on the held-out suite,
// every kind at least the peer's and the mean over its kinds at least the
// peer's + TargetMeanMargin. A group the suite lacks gives one row,
// "<group> conditions not scored", missed (Value NaN). It fails when no peer
// is attached.
func SuiteTargets(r *SuiteResult, clean float64) ([]TargetRow, error) {
	if r.Peer == nil {
		return nil, fmt.Errorf("eval: targets of %s need the peer's figures on the same suite; give --peer (testdata/peer/lenet5_<data>.json and its _heldout twin)", r.Model)
	}
	groups := map[string]bool{}
	for _, p := range r.Points {
		groups[p.Group] = true
	}
	peer := r.Peer.Name
	var rows []TargetRow
	add := func(name, rule string, v, target float64) {
		rows = append(rows, TargetRow{Name: name, Rule: rule, Value: v, Target: target, Met: v >= target})
	}
	for _, g := range []string{datasets.GroupMNISTC, datasets.GroupGrid, datasets.GroupHeldOut} {
		if !groups[g] {
			add(g+" conditions not scored", "scored beside "+peer, math.NaN(), math.NaN())
		}
	}
	for _, k := range r.Kinds {
		if k.Group != datasets.GroupMNISTC {
			continue
		}
		pk, _ := r.Peer.Kind(k.Group, k.Kind) // SetPeer matched every condition
		add("mnist-c "+k.Kind, "≥ "+peer, k.Accuracy, pk.Accuracy)
	}
	if groups[datasets.GroupMNISTC] {
		add(fmt.Sprintf("mean over %d MNIST-C kinds", r.CorruptionKinds), "≥ "+peer+" + 5", r.MeanCorruption, r.Peer.MeanCorruption+TargetMeanMargin)
	}
	for i, p := range r.Points {
		if p.Group == datasets.GroupGrid {
			add("grid "+p.Name, "≥ "+peer, p.Accuracy, r.Peer.Points[i])
		}
	}
	add("clean", fmt.Sprintf("≥ %.2f%%", 100*clean), r.Clean.Accuracy, clean)
	for _, k := range r.Kinds {
		if k.Group == datasets.GroupHeldOut {
			pk, _ := r.Peer.Kind(k.Group, k.Kind)
			add("held-out "+k.Kind, "≥ "+peer, k.Accuracy, pk.Accuracy)
		}
	}
	if groups[datasets.GroupHeldOut] {
		add(fmt.Sprintf("mean over %d held-out kinds", r.HeldOutKinds), "≥ "+peer+" + 5", r.MeanHeldOut, r.Peer.MeanHeldOut+TargetMeanMargin)
	}
	return rows, nil
}

// Row returns the row as a line of a targets table (see WriteTargets).
func (t TargetRow) Row() Target {
	return Target{What: t.Name, Goal: fmt.Sprintf("%s (%.2f%%)", t.Rule, 100*t.Target),
		Measured: fmt.Sprintf("%.2f%%", 100*t.Value), Status: verdict(t.Met)}
}

// WriteSuiteTargets writes the targets of r (SuiteTargets with the clean
// target of data, see CleanTarget) with WriteTargets.
func WriteSuiteTargets(w io.Writer, r *SuiteResult, data string) error {
	clean, ok := CleanTarget(data)
	if !ok {
		return fmt.Errorf("eval: targets: no clean-accuracy target for data %q; the targets are set for mnist and fashion", data)
	}
	rows, err := SuiteTargets(r, clean)
	if err != nil {
		return err
	}
	fmt.Fprintf(w, "\ntargets on %s (%s beside %s, mean of %d seeds):\n", data, r.Model, r.Peer.Name, r.Peer.Seeds)
	ts := make([]Target, len(rows))
	for i, t := range rows {
		ts[i] = t.Row()
	}
	return WriteTargets(w, ts)
}
