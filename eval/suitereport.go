package eval

import (
	"fmt"
	"strings"

	"github.com/striate/striate/datasets"
	"gonum.org/v1/plot/plotter"
)

// peerAsResult returns the peer's figures of r in the shape of a
// SuiteResult (intervals of zero width: the peer's means carry none), or nil
// when r has no peer.
func (r *SuiteResult) peerAsResult() *SuiteResult {
	s := r.Peer
	if s == nil {
		return nil
	}
	point := func(p SuitePoint, acc float64) SuitePoint {
		p.Accuracy, p.Correct, p.Pred = acc, 0, nil
		p.CI = Interval{acc, acc, p.CI.Level}
		return p
	}
	out := &SuiteResult{Model: s.Name + " (peer)", Data: r.Data, Seed: r.Seed, Clean: point(r.Clean, s.Clean), SuiteSummary: s.SuiteSummary}
	for i, p := range r.Points {
		out.Points = append(out.Points, point(p, s.Points[i]))
	}
	return out
}

// gridRobustness returns r's grid curves as a Robustness, for the panels of
// RobustnessFigure.
func (r *SuiteResult) gridRobustness() *Robustness {
	rb := &Robustness{Model: r.Model, Data: r.Data, Seed: r.Seed}
	for _, k := range r.GridKinds() {
		for _, p := range r.GridCurve(k) {
			rb.Points = append(rb.Points, RobustPoint{Kind: k, Unit: p.Unit, Level: p.Level, Label: p.Name, N: p.N,
				Correct: p.Correct, Accuracy: p.Accuracy, CI: p.CI})
		}
	}
	return rb
}

// withPeer returns results followed by the peer of the first result that
// has one, and the number of peers appended (0 or 1).
func withPeer(results []*SuiteResult) ([]*SuiteResult, int) {
	for _, r := range results {
		if p := r.peerAsResult(); p != nil {
			return append(append([]*SuiteResult(nil), results...), p), 1
		}
	}
	return results, 0
}

// peerSeeds returns the seed count of the first peer attached to a result
// of group (0 when none).
func peerSeeds(group []*SuiteResult) int {
	for _, g := range group {
		if g.Peer != nil {
			return g.Peer.Seeds
		}
	}
	return 0
}

// SuiteCurvesFigure draws accuracy against level for each grid kind, one
// panel per kind, one line per result with Wilson error bars, the clean
// accuracy at the identity level, and the peer (of the first result that
// has one) dashed. All results should come from the same suite.
func SuiteCurvesFigure(results []*SuiteResult) ([]byte, error) {
	all, peers := withPeer(results)
	var curves []*Robustness
	for _, r := range all {
		curves = append(curves, r.gridRobustness())
	}
	if len(curves) == 0 || len(curves[0].Points) == 0 {
		return nil, fmt.Errorf("eval: suite curves figure with no grid conditions")
	}
	return curvePanels(curves, peers)
}

// SuiteKindsFigure draws the accuracy of each MNIST-C kind (the mean over
// its severities) as grouped bars, one bar per result and the peer's, with
// the mean corruption accuracy as the last group.
func SuiteKindsFigure(results []*SuiteResult, title string) ([]byte, error) {
	all, _ := withPeer(results)
	if len(all) == 0 || all[0].CorruptionKinds == 0 {
		return nil, fmt.Errorf("eval: suite kinds figure with no MNIST-C conditions")
	}
	var groups []string
	for _, k := range all[0].Kinds {
		if k.Group == datasets.GroupMNISTC {
			groups = append(groups, k.Kind)
		}
	}
	groups = append(groups, "mean")
	names := make([]string, len(all))
	vals := make([]plotter.Values, len(all))
	for i, r := range all {
		names[i] = r.Model
		vals[i] = make(plotter.Values, len(groups))
		for g, kind := range groups[:len(groups)-1] {
			if k, ok := r.Kind(datasets.GroupMNISTC, kind); ok {
				vals[i][g] = 100 * k.Accuracy
			}
		}
		vals[i][len(groups)-1] = 100 * r.MeanCorruption
	}
	return groupedBars(title, "MNIST-C corruption (mean over severities)", "accuracy (%)", groups, names, vals)
}

// pct formats a fraction as a percentage with two decimals.
func pct(x float64) string { return fmt.Sprintf("%.2f", 100*x) }

// pctCI formats an interval as "lo–hi" in percent.
func pctCI(iv Interval) string { return fmt.Sprintf("%.2f–%.2f", 100*iv.Lo, 100*iv.Hi) }

// suiteHeading gives the suite section's title and opening paragraph from
// the groups of conditions the results hold: a run of --suite heldout is not
// headed as the development suite, nor one of --suite all as either alone.
func suiteHeading(rs []*SuiteResult) (string, string) {
	dev, held := false, false
	for _, r := range rs {
		for _, p := range r.Points {
			switch p.Group {
			case datasets.GroupHeldOut:
				held = true
			case datasets.GroupMNISTC, datasets.GroupGrid:
				dev = true
			}
		}
	}
	const devText = "the development suite (the 15 MNIST-C corruptions of Mu & Gilmer 2019 at severities 1–5 and six perturbation " +
		"kinds on a fine grid of levels; settings are chosen on it, on validation images)"
	const heldText = "the held-out suite (7 corruption kinds at severities 1–5 on which no setting is ever chosen: they are scored, " +
		"never tuned for)"
	const tail = " Every model, and the peer when shown, sees exactly the same corrupted images. A kind's accuracy is the mean over " +
		"its severities or levels; the mean corruption accuracy is the mean over the MNIST-C kinds, and the worst kind the MNIST-C " +
		"kind of lowest accuracy. Accuracies in %; intervals are 95% Wilson score intervals; the peer's figures are means over its " +
		"training seeds."
	lead := "Models trained on clean images, scored on corrupted copies of the test set under "
	switch {
	case dev && held:
		return "Development and held-out suites: common corruptions", lead + devText + " and " + heldText + "." + tail
	case held:
		return "Held-out suite: corruptions no setting was chosen on", lead + heldText + "." + tail
	}
	return "Development suite: common corruptions", lead + devText + "." + tail
}

// suiteBlocks renders the suite section: per data set a summary
// table, the per-kind table, the kind bars, the grid curves and the table of
// every condition.
func suiteBlocks(rs []*SuiteResult, add func(...block), fig func(stem, title, caption string, png []byte)) error {
	head, text := suiteHeading(rs)
	add(headBlock{2, head})
	add(paraBlock{text})
	var order []string
	byData := map[string][]*SuiteResult{}
	for _, r := range rs {
		if _, ok := byData[r.Data]; !ok {
			order = append(order, r.Data)
		}
		byData[r.Data] = append(byData[r.Data], r)
	}
	for _, dname := range order {
		group := byData[dname]
		all, peers := withPeer(group)
		add(headBlock{3, "On " + dname})
		st := tableBlock{header: []string{"model", "clean (%)", "mean corruption (%)", "MNIST-C kinds", "worst kind", "worst kind (%)", "conditions", "images per condition"}}
		for i, r := range all {
			name := r.Model
			if i >= len(all)-peers {
				name = fmt.Sprintf("%s (%d seeds)", r.Model, peerSeeds(group))
			}
			worst, worstAcc, mean := "", "", ""
			if r.Worst != nil {
				worst, worstAcc = r.Worst.Kind, pct(r.Worst.Accuracy)
			}
			if r.CorruptionKinds > 0 {
				mean = pct(r.MeanCorruption)
			}
			st.rows = append(st.rows, []string{name, pct(r.Clean.Accuracy), mean, fmt.Sprint(r.CorruptionKinds), worst, worstAcc,
				fmt.Sprint(len(r.Points)), fmt.Sprint(r.Clean.N)})
		}
		add(st)

		kt := tableBlock{header: []string{"kind", "group", "severities or levels"}}
		for _, r := range all {
			kt.header = append(kt.header, r.Model+" (%)")
		}
		for _, k := range all[0].Kinds {
			row := []string{k.Kind, k.Group, fmt.Sprint(k.Conditions)}
			for _, r := range all {
				cell := "—"
				if ks, ok := r.Kind(k.Group, k.Kind); ok {
					cell = pct(ks.Accuracy)
				}
				row = append(row, cell)
			}
			kt.rows = append(kt.rows, row)
		}
		add(kt)

		if all[0].CorruptionKinds > 0 {
			png, err := SuiteKindsFigure(group, "MNIST-C corruptions on "+dname)
			if err != nil {
				return err
			}
			fig("suite-kinds-"+dname, "MNIST-C corruptions on "+dname,
				"Accuracy under each MNIST-C corruption, the mean over its five severities, one bar per model; the last group is the mean corruption accuracy.", png)
		}
		if len(all[0].GridKinds()) > 0 {
			png, err := SuiteCurvesFigure(group)
			if err != nil {
				return err
			}
			fig("suite-curves-"+dname, "Accuracy against perturbation level on "+dname,
				"One panel per perturbation kind of the grid; the clean accuracy is drawn at the level that leaves the image unchanged; "+
					"bars are 95% Wilson intervals; a dashed line is the peer's mean over its seeds.", png)
		}

		ct := tableBlock{header: []string{"condition", "level", "unit"}}
		for _, r := range all {
			ct.header = append(ct.header, r.Model+" (%)")
		}
		for _, r := range group {
			ct.header = append(ct.header, r.Model+" 95% interval (%)")
		}
		for _, c := range append([]SuitePoint{all[0].Clean}, all[0].Points...) {
			row := []string{c.Name, fmt.Sprintf("%g", c.Level), c.Unit}
			if c.Name == "clean" {
				row[1], row[2] = "", ""
			}
			var cis []string
			for ri, r := range all {
				p, ok := r.point(c.Name)
				cell, ci := "—", "—"
				if ok {
					cell, ci = pct(p.Accuracy), pctCI(p.CI)
				}
				row = append(row, cell)
				if ri < len(group) {
					cis = append(cis, ci)
				}
			}
			ct.rows = append(ct.rows, append(row, cis...))
		}
		add(ct)
	}
	return nil
}

// point returns the condition named name, or the clean point for "clean".
func (r *SuiteResult) point(name string) (SuitePoint, bool) {
	if name == "clean" {
		return r.Clean, true
	}
	for _, p := range r.Points {
		if p.Name == name {
			return p, true
		}
	}
	return SuitePoint{}, false
}

// suiteKeyFigures returns one sentence per data set on the suite's headline
// figures, for the report's opening summary.
func suiteKeyFigures(rs []*SuiteResult) []string {
	var out []string
	for _, r := range rs {
		if r.CorruptionKinds == 0 {
			continue
		}
		s := fmt.Sprintf("%s on %s: mean corruption accuracy %s%% over %d MNIST-C kinds, worst %s at %s%%",
			r.Model, r.Data, pct(r.MeanCorruption), r.CorruptionKinds, r.Worst.Kind, pct(r.Worst.Accuracy))
		if r.Peer != nil {
			s += fmt.Sprintf(" (%s: %s%%, worst %s at %s%%)", r.Peer.Name, pct(r.Peer.MeanCorruption), r.Peer.Worst.Kind, pct(r.Peer.Worst.Accuracy))
		}
		out = append(out, strings.TrimSpace(s)+".")
	}
	return out
}
