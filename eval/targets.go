package eval

import (
	"fmt"
	"io"
	"strings"
	"text/tabwriter"
)

// Target is one row of a targets table (the speed targets of BenchTargets,
// the robustness targets of SuiteTargets): what, the goal, what this run
// measured and its verdict.
type Target struct {
	What     string
	Goal     string
	Measured string // the figure, or where it comes from when not measured
	Status   string // TargetMet, TargetMissed or TargetNotMeasured
}

// Target verdicts.
const (
	TargetMet         = "met"
	TargetMissed      = "missed"
	TargetNotMeasured = "not measured"
)

func verdict(ok bool) string {
	if ok {
		return TargetMet
	}
	return TargetMissed
}

// WriteTargets writes ts as a table, then how many targets were met of
// those measured and the names of the missed ones. Every targets table of
// striate (striate bench, striate evaluate --targets) is written by it.
func WriteTargets(w io.Writer, ts []Target) error {
	tw := tabwriter.NewWriter(w, 2, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "target\tgoal\tthis run\tverdict")
	var missed []string
	measured := 0
	for _, t := range ts {
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\n", t.What, t.Goal, t.Measured, t.Status)
		if t.Status != TargetNotMeasured {
			measured++
		}
		if t.Status == TargetMissed {
			missed = append(missed, t.What)
		}
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	fmt.Fprintf(w, "%d of %d targets met", measured-len(missed), measured)
	if n := len(ts) - measured; n > 0 {
		fmt.Fprintf(w, " (%d not measured by this run)", n)
	}
	if len(missed) > 0 {
		fmt.Fprintf(w, "; missed: %s", strings.Join(missed, "; "))
	}
	_, err := fmt.Fprintln(w)
	return err
}
