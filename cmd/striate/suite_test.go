package main

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/eval"
)

// TestCLIEvaluateSuite scores the fixture model on the 15 MNIST-C
// corruptions at the published severity beside a peer file and checks the
// printed per-kind table, mean corruption accuracy and worst kind against
// results.json and against the definition of the mean corruption accuracy
// (Mu & Gilmer 2019: the unweighted mean over the 15 corruptions of each
// one's accuracy).
func TestCLIEvaluateSuite(t *testing.T) {
	cliFixture(t)
	dir := t.TempDir()
	suite, err := datasets.MNISTCSuite(datasets.PublishedSeverity)
	if err != nil {
		t.Fatal(err)
	}
	// A peer that gets 0.5 + 0.02·i right under condition i (two seeds
	// 0.01 either side), 0.99 on the clean images.
	peer := eval.PeerFigures{Generator: "test", Dataset: "shapes", SuiteSeed: datasets.SuiteSeed, Seeds: []int64{1, 2},
		Conditions: []eval.PeerCondition{{Name: "clean", Group: "clean", Accuracy: []float64{0.98, 1}, Mean: 0.99}}}
	var peerMean float64
	for i, c := range suite {
		a := 0.5 + 0.02*float64(i)
		peer.Conditions = append(peer.Conditions, eval.PeerCondition{Name: c.Name, Group: c.Group, Kind: c.Kind,
			Accuracy: []float64{a - 0.01, a + 0.01}, Mean: (a - 0.01 + a + 0.01) / 2})
		peerMean += peer.Conditions[i+1].Mean / float64(len(suite))
	}
	pb, err := json.Marshal(peer)
	if err != nil {
		t.Fatal(err)
	}
	peerFile := filepath.Join(dir, "peer.json")
	if err := os.WriteFile(peerFile, pb, 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "rep")
	r := mustRun(t, 0, "evaluate", "--model", cliModelA, "--data", cliTest, "--suite", "mnistc", "--peer", peerFile, "--out", out, "--workers", "2")
	res := readResults(t, out)
	if len(res.Suites) != 1 || len(res.Suites[0].Points) != len(suite) || res.Suites[0].Peer == nil {
		t.Fatalf("results.json suites %+v; want one suite of %d conditions with the peer attached", res.Suites, len(suite))
	}
	s := res.Suites[0]
	if s.Clean.N != cliTestSet.N {
		t.Errorf("suite scored %d clean images; the test folder has %d", s.Clean.N, cliTestSet.N)
	}
	var mean float64
	worst := s.Kinds[0]
	for i, k := range s.Kinds {
		if k.Kind != suite[i].Kind || k.Conditions != 1 || k.Accuracy != s.Points[i].Accuracy {
			t.Errorf("kind %d: %+v; want %s over 1 condition at the accuracy of %s (%v)", i, k, suite[i].Kind, s.Points[i].Name, s.Points[i].Accuracy)
		}
		line := fmt.Sprintf("%s  %s  1  %.2f  %.2f", k.Group, k.Kind, 100*k.Accuracy, 100*peer.Conditions[i+1].Mean)
		if !containsSpaced(r.stdout, line) {
			t.Errorf("stdout lacks the row %q:\n%s", line, r.stdout)
		}
		mean += k.Accuracy / float64(len(s.Kinds))
		if k.Accuracy < worst.Accuracy {
			worst = k
		}
	}
	for _, want := range []string{
		fmt.Sprintf("mean corruption accuracy over 15 MNIST-C kinds: %.2f%% (LeNet-5 %.2f%%)", 100*mean, 100*peerMean),
		fmt.Sprintf("worst kind: %s, %.2f%%", worst.Kind, 100*worst.Accuracy),
		"test images", "class mean",
	} {
		if !strings.Contains(r.stdout, want) {
			t.Errorf("stdout lacks %q:\n%s", want, r.stdout)
		}
	}

	for _, tc := range []struct {
		args []string
		want string
	}{
		{[]string{"--suite", "mnist-c"}, "none, dev, mnistc, grid, heldout or all"},
		{[]string{"--suite", "dev", "--peer", peerFile, "--targets"}, "--targets needs --suite all"},
		{[]string{"--peer", peerFile}, "--peer needs --suite"},
		{[]string{"--suite", "grid", "--out", dir, "--shard", "0/2"}, "run --robust, --suite and --speed unsharded"},
	} {
		args := append([]string{"evaluate", "--model", cliModelA, "--data", cliTest}, tc.args...)
		r := runCLI(t, args...)
		if r.code != 2 || !strings.Contains(r.stderr, tc.want) {
			t.Errorf("striate %s: exit %d, stderr %q; want exit 2 and %q", strings.Join(args, " "), r.code, r.stderr, tc.want)
		}
	}
}

// containsSpaced reports whether text has a line whose fields are those of
// want (tabwriter pads with any number of spaces).
func containsSpaced(text, want string) bool {
	w := strings.Join(strings.Fields(want), " ")
	for _, l := range strings.Split(text, "\n") {
		if strings.Join(strings.Fields(l), " ") == w {
			return true
		}
	}
	return false
}
