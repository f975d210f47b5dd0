package main

import (
	"bytes"
	"strings"
	"testing"
)

func TestBenchMissingReference(t *testing.T) {
	var out, errb bytes.Buffer
	code := run([]string{"bench", "--ref", t.TempDir()}, &out, &errb)
	if code != exitFail || !strings.Contains(errb.String(), "filterbank.json") {
		t.Errorf("exit %d, stderr %q; want 1 and a message naming filterbank.json", code, errb.String())
	}
	if code := run([]string{"bench", "--threads", "0"}, &out, &errb); code != exitUsage {
		t.Errorf("--threads 0: exit %d, want %d", code, exitUsage)
	}
}

// A quick bench prints the table with the peers' figures from the
// reference work built into the binary beside striate's (PyTorch conv2d
// 6,486 img/s on MNIST, 1 thread; internal/benchwork/data/peers.json). It
// needs no folder outside the repository. The sections past the front end
// (scikit-learn's lasso_cd 24,190 patches/s beside the encode row) and the
// targets table follow.
func TestBenchQuickTable(t *testing.T) {
	var out, errb bytes.Buffer
	if code := run([]string{"bench", "--quick", "--threads", "1", "--repeats", "1", "--quiet"}, &out, &errb); code != exitOK {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	s := out.String()
	for _, want := range []string{"28×28", "256×256", "6,486", "108.0", "PyTorch 1.13 conv2d", "img/s", "build",
		"sparse coding encode", "24,190", "single-image latency p50, int8", "targets:", "int8 model file size", "--full"} {
		if !strings.Contains(s, want) {
			t.Errorf("bench output lacks %q:\n%s", want, s)
		}
	}
}
