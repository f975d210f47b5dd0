package eval

import (
	"bytes"
	"math"
	"strings"
	"testing"
	"time"

	"github.com/striate/striate/internal/frontbench"
)

// TestBenchPeersFromReference: the peer figures Bench puts beside its rows
// are those of the shared reference work's README (§2: fit 66-69 s for 10
// passes over 90,000 patches, objective 51.03 against the zero code's 78.84,
// lasso_cd 24,190 patches/s; §3: LeNet-5 117-377 CPU s to 99.0%).
func TestBenchPeersFromReference(t *testing.T) {
	p, _, err := loadBenchPeers()
	if err != nil {
		t.Fatal(err)
	}
	if p.fitLo != 66 || p.fitHi != 69 || p.objective != 51.03 || p.zeroCode != 78.84 || p.encode != 24190 || p.lenetLo != 117 || p.lenetHi != 377 {
		t.Errorf("peer figures %+v; want fit 66-69 s, objective 51.03 / 78.84, 24,190 patches/s, LeNet-5 117-377 CPU s", p)
	}
}

// TestBenchSparseQuick: the sparse-coding rows of a quick run hold positive
// rates, and the fitted dictionary codes the held-out patches better than
// the zero code (objective fraction in (0, 1)) — the lasso objective of a
// code found by descent from zero never exceeds the zero code's.
func TestBenchSparseQuick(t *testing.T) {
	p, _, err := loadBenchPeers()
	if err != nil {
		t.Fatal(err)
	}
	r := &BenchReport{}
	if err := benchSparse(r, BenchConfig{Quick: true}, p); err != nil {
		t.Fatal(err)
	}
	if len(r.Rows) != 3 {
		t.Fatalf("%d rows; want fit, encode and objective", len(r.Rows))
	}
	for _, row := range r.Rows[:2] {
		if !(row.Striate > 0) || row.Peer == 0 {
			t.Errorf("row %q: striate %g, peer %g; want both positive", row.Stage, row.Striate, row.Peer)
		}
	}
	if f := r.Rows[2].Striate; !(f > 0 && f < 1) {
		t.Errorf("held-out objective / zero-code objective %g; want in (0, 1)", f)
	}
	// The peer's fit rate: 10 passes of 90,000 patches in 69 s and 66 s.
	if lo, hi := r.Rows[0].Peer, r.Rows[0].PeerHigh; math.Abs(lo-900000.0/69) > 1e-6 || math.Abs(hi-900000.0/66) > 1e-6 {
		t.Errorf("peer fit rate %g–%g; want 900,000/69–900,000/66 patches/s", lo, hi)
	}
}

// TestBenchTargets: each target's verdict at and past its goal, the
// targets of the other build named rather than judged, and the figures a
// run did not measure naming the run that gives them.
func TestBenchTargets(t *testing.T) {
	front := []frontbench.Row{
		{Stage: "front end", Striate: 1300, Peer: 1000},
		{Stage: "front end", Striate: 260, Peer: 200},
	}
	full := &FullFit{Preset: "digits", Images: 60000, Wall: 35 * time.Second, CPU: 63 * time.Second, Accuracy: 0.9941, Int8Accuracy: 0.9921}
	f := BenchFacts{Build: "simd", Int8P50: 0.15, FloatP50: 0.2, FloatBytes: 1000, Int8Bytes: 300, Folder150: 5 * time.Second, MNIST: full, LeNetCPU: 117}
	got := map[string]Target{}
	for _, tg := range BenchTargets(front, f) {
		got[tg.What] = tg
	}
	for what, want := range map[string]string{
		"full MNIST fit, digits preset":           TargetMet,    // 35 s ≤ 35 s
		"CPU seconds to ≥ 99.3% on MNIST":         TargetMissed, // 63/117 = 0.54 > 0.33
		"CPU use while fitting (full MNIST fit)":  TargetMet,    // 63/35 = 180%
		"150-image fit":                           TargetMet,
		"int8 accuracy, MNIST":                    TargetMet, // −0.20 pt
		"int8 accuracy, Fashion-MNIST":            TargetNotMeasured,
		"full Fashion-MNIST fit, garments preset": TargetNotMeasured,
		"int8 model file size":                    TargetMet, // 30%
		"int8 latency p50, SIMD build":            TargetMet, // 0.15 ms
		"int8 vs float latency, plain build":      TargetNotMeasured,
		"front end, plain build, every row":       TargetNotMeasured,
		"peak memory of the full striate demo":    TargetNotMeasured,
	} {
		if got[what].Status != want {
			t.Errorf("%s: %q (%s); want %q", what, got[what].Status, got[what].Measured, want)
		}
	}
	if m := got["full Fashion-MNIST fit, garments preset"].Measured; !strings.Contains(m, "--full") {
		t.Errorf("unmeasured Fashion-MNIST fit names %q; want the --full run", m)
	}
	// Past each goal, and the plain build's own targets.
	full.Int8Accuracy = 0.9920
	f.Build, f.Int8P50, f.FloatP50, f.Int8Bytes = "plain", 0.4, 0.59, 301
	front[1].Striate = 259
	got = map[string]Target{}
	for _, tg := range BenchTargets(front, f) {
		got[tg.What] = tg
	}
	for what, want := range map[string]string{
		"int8 accuracy, MNIST":               TargetMissed, // −0.21 pt
		"int8 model file size":               TargetMissed, // 30.1%
		"int8 vs float latency, plain build": TargetMissed, // 1.475×
		"front end, plain build, every row":  TargetMissed, // 1.295× on row 2
		"int8 latency p50, SIMD build":       TargetNotMeasured,
		"full MNIST fit, digits preset":      TargetNotMeasured, // plain build: the target is the SIMD build's
	} {
		if got[what].Status != want {
			t.Errorf("plain build, %s: %q (%s); want %q", what, got[what].Status, got[what].Measured, want)
		}
	}
	var b bytes.Buffer
	if err := WriteTargets(&b, BenchTargets(front, f)); err != nil {
		t.Fatal(err)
	}
	if n := strings.Count(b.String(), "\n"); n != 14 {
		t.Errorf("targets table has %d lines; want a heading, 12 rows and the count:\n%s", n, b.String())
	}
	if !strings.Contains(b.String(), "0 of 4 targets met (8 not measured by this run); missed: ") {
		t.Errorf("targets table's count line is wrong:\n%s", b.String())
	}
}
