package eval

import (
	"bytes"
	"math"
	"os"
	"strings"
	"testing"

	"github.com/striate/striate/datasets"
)

// targetsResult is a hand-made result on a suite of every group with a
// two-seed peer: MNIST-C kind a at 0.90 and 0.80 (peer 0.84 mean), kind b
// at 0.60 (peer 0.61), grid noise-0.1 at 0.95 (peer 0.95, a tie), clean
// 0.995, held-out kind x at 0.70 (peer 0.60).
func targetsResult(t *testing.T) *SuiteResult {
	t.Helper()
	r := &SuiteResult{Model: "m", Seed: datasets.SuiteSeed, Clean: SuitePoint{Name: "clean", Accuracy: 0.995, N: 1000}}
	for _, p := range []struct {
		name, group, kind string
		acc               float64
	}{{"a-1", datasets.GroupMNISTC, "a", 0.9}, {"a-2", datasets.GroupMNISTC, "a", 0.8}, {"b-1", datasets.GroupMNISTC, "b", 0.6},
		{"noise-0.1", datasets.GroupGrid, "noise", 0.95}, {"x-1", datasets.GroupHeldOut, "x", 0.7}} {
		r.Points = append(r.Points, SuitePoint{Name: p.name, Group: p.group, Kind: p.kind, Accuracy: p.acc, N: 1000})
	}
	r.summarise()
	peer := &PeerFigures{Name: "LeNet-5", Source: "p.json", SuiteSeed: datasets.SuiteSeed, Seeds: []int64{0, 1}}
	for _, c := range []struct {
		name, group, kind string
		a, b              float64
	}{{"clean", "clean", "", 0.99, 0.99}, {"a-1", datasets.GroupMNISTC, "a", 0.87, 0.85}, {"a-2", datasets.GroupMNISTC, "a", 0.83, 0.81},
		{"b-1", datasets.GroupMNISTC, "b", 0.60, 0.62}, {"noise-0.1", datasets.GroupGrid, "noise", 0.94, 0.96}, {"x-1", datasets.GroupHeldOut, "x", 0.55, 0.65}} {
		peer.Conditions = append(peer.Conditions, PeerCondition{Name: c.name, Group: c.group, Kind: c.kind, Accuracy: []float64{c.a, c.b}, Mean: (c.a + c.b) / 2})
	}
	if err := r.SetPeer(peer); err != nil {
		t.Fatal(err)
	}
	return r
}

// TestSuiteTargets checks the rules of the targets table on hand-computed
// means: kind a 0.85 ≥ 0.84 met, b 0.60 < 0.61 missed, the MNIST-C mean
// 0.725 < 0.725 + 0.05 missed, the grid tie met, clean 0.995 ≥ 0.994 met,
// held-out x 0.70 ≥ 0.60 and its mean 0.70 ≥ 0.65 met.
func TestSuiteTargets(t *testing.T) {
	r := targetsResult(t)
	rows, err := SuiteTargets(r, TargetCleanMNIST)
	if err != nil {
		t.Fatal(err)
	}
	want := []struct {
		name          string
		value, target float64
		met           bool
	}{{"mnist-c a", 0.85, 0.84, true}, {"mnist-c b", 0.6, 0.61, false}, {"mean over 2 MNIST-C kinds", 0.725, 0.775, false},
		{"grid noise-0.1", 0.95, 0.95, true}, {"clean", 0.995, 0.994, true}, {"held-out x", 0.7, 0.6, true}, {"mean over 1 held-out kinds", 0.7, 0.65, true}}
	if len(rows) != len(want) {
		t.Fatalf("%d rows %+v; want %d", len(rows), rows, len(want))
	}
	for i, w := range want {
		g := rows[i]
		if g.Name != w.name || math.Abs(g.Value-w.value) > 1e-12 || math.Abs(g.Target-w.target) > 1e-12 || g.Met != w.met {
			t.Errorf("row %d = %+v; want %+v", i, g, w)
		}
	}
	var b bytes.Buffer
	if err := WriteSuiteTargets(&b, r, "mnist"); err != nil {
		t.Fatal(err)
	}
	if out := b.String(); !strings.Contains(out, "5 of 7 targets met; missed: mnist-c b; mean over 2 MNIST-C kinds") || strings.Count(out, " missed\n") != 2 {
		t.Errorf("table:\n%s", out)
	}
	if err := WriteSuiteTargets(&b, r, "cifar"); err == nil || !strings.Contains(err.Error(), "mnist and fashion") {
		t.Errorf("unknown data: %v", err)
	}
	r.Peer = nil
	if _, err := SuiteTargets(r, 0.9); err == nil || !strings.Contains(err.Error(), "--peer") {
		t.Errorf("no peer: %v", err)
	}
	r = targetsResult(t)
	dev, held := *r, *r
	dev.Points, held.Points = r.Points[:4], r.Points[4:]
	dev.summarise()
	held.summarise()
	if rows, err := SuiteTargets(&dev, 0.9); err != nil || rows[0].Name != "heldout conditions not scored" || rows[0].Met || len(rows) != 6 {
		t.Errorf("no held-out conditions: %+v, %v; want a first row saying so, missed, then the 5 others", rows, err)
	}
	m, err := MergeSuiteResults(&dev, &held)
	if err != nil || len(m.Points) != 5 || m.HeldOutKinds != 1 || math.Abs(m.MeanCorruption-0.725) > 1e-12 {
		t.Errorf("merged %+v, %v", m, err)
	}
	if _, err := MergeSuiteResults(&dev, &dev); err == nil || !strings.Contains(err.Error(), "both hold") {
		t.Errorf("repeated conditions: %v", err)
	}
	held.Clean.Correct--
	if _, err := MergeSuiteResults(&dev, &held); err == nil || !strings.Contains(err.Error(), "one model") {
		t.Errorf("another clean score: %v", err)
	}
}

// TestMergePeers checks that two runs of the same peer models merge, and
// that runs whose clean figures differ (other models) or whose seeds differ
// are refused.
func TestMergePeers(t *testing.T) {
	mk := func(seeds []int64, clean float64, names ...string) *PeerFigures {
		p := &PeerFigures{Source: "f", Dataset: "mnist", SuiteSeed: 12, Seeds: seeds,
			Conditions: []PeerCondition{{Name: "clean", Group: "clean", Accuracy: []float64{clean, clean}, Mean: clean}}}
		for _, n := range names {
			p.Conditions = append(p.Conditions, PeerCondition{Name: n, Accuracy: []float64{0.5, 0.5}, Mean: 0.5})
		}
		return p
	}
	m, err := MergePeers(mk([]int64{0, 1}, 0.99, "a-1"), mk([]int64{0, 1}, 0.99, "x-1", "x-2"))
	if err != nil || len(m.Conditions) != 4 || m.Conditions[3].Name != "x-2" {
		t.Fatalf("merged %+v, %v", m, err)
	}
	if _, err := MergePeers(mk([]int64{0, 1}, 0.99), mk([]int64{0, 1}, 0.98)); err == nil || !strings.Contains(err.Error(), "different peer models") {
		t.Errorf("other models: %v", err)
	}
	if _, err := MergePeers(mk([]int64{0, 1}, 0.99), mk([]int64{0, 2}, 0.99)); err == nil || !strings.Contains(err.Error(), "seeds") {
		t.Errorf("other seeds: %v", err)
	}
	if _, err := ReadPeers("a.json,,b.json"); err == nil || !strings.Contains(err.Error(), "empty entry") {
		t.Errorf("empty entry: %v", err)
	}
}

// TestTargetsFromLongRun prints the targets table of a long run (STRIATE_LONG=1):
// STRIATE_TARGETS lists DATA=RESULTS=PEER[,PEER…] entries separated by
// ";", RESULTS being the results.json `striate evaluate --suite all --out
// DIR` writes, or several joined by "+" (a dev run and a heldout run of the
// same model, MergeSuiteResults), for example
//
//	STRIATE_LONG=1 STRIATE_TARGETS='mnist=/tmp/m/results.json=testdata/peer/lenet5_mnist.json,testdata/peer/lenet5_mnist_heldout.json' \
//	  go test -run TestTargetsFromLongRun -v ./eval
//
// (paths relative to the repository root are taken from it).
func TestTargetsFromLongRun(t *testing.T) {
	spec := os.Getenv("STRIATE_TARGETS")
	if os.Getenv("STRIATE_LONG") == "" || spec == "" {
		t.Skip("set STRIATE_LONG=1 and STRIATE_TARGETS to print the targets of a long run")
	}
	for _, entry := range strings.Split(spec, ";") {
		parts := strings.SplitN(entry, "=", 3)
		if len(parts) != 3 {
			t.Fatalf("STRIATE_TARGETS entry %q: want DATA=RESULTS.json=PEER[,PEER…]", entry)
		}
		var rs []*SuiteResult
		for _, f := range strings.Split(parts[1], "+") {
			r, err := ReadSuiteResult(rootPath(f))
			if err != nil {
				t.Fatal(err)
			}
			rs = append(rs, r)
		}
		r, err := MergeSuiteResults(rs...)
		if err != nil {
			t.Fatal(err)
		}
		var peers []string
		for _, p := range strings.Split(parts[2], ",") {
			peers = append(peers, rootPath(p))
		}
		peer, err := ReadPeers(strings.Join(peers, ","))
		if err != nil {
			t.Fatal(err)
		}
		if err := r.SetPeer(peer); err != nil {
			t.Fatal(err)
		}
		var b bytes.Buffer
		if err := WriteSuiteTargets(&b, r, parts[0]); err != nil {
			t.Fatal(err)
		}
		t.Log(b.String())
	}
}

// rootPath resolves a path given relative to the repository root.
func rootPath(p string) string {
	if strings.HasPrefix(p, "/") {
		return p
	}
	return "../" + p
}
