package benchwork

import (
	"testing"
)

// The reference folder, when present, parses: 64 crops of 256×256, 18
// kernels, and the peer table with PyTorch conv2d at 6,486 / 10,124 MNIST
// img/s (../shared/bench/README.md).
func TestReferenceFolder(t *testing.T) {
	dir, err := FindDir("")
	if err != nil {
		t.Skipf("reference folder not available: %v", err)
	}
	peers, err := Peers(dir)
	if err != nil {
		t.Fatal(err)
	}
	p, v := Fastest(peers, 28, 2)
	if v != 10124 || p.Name == "" {
		t.Errorf("fastest 2-thread MNIST peer = %q at %g, want PyTorch conv2d at 10124", p.Name, v)
	}
	if _, v := Fastest(peers, 256, 1); v != 108 {
		t.Errorf("fastest 1-thread 256×256 peer = %g, want 108 (PyTorch FFT)", v)
	}
	ks, err := Kernels(dir)
	if err != nil || len(ks) != 18 || ks[17].Size != 29 {
		t.Fatalf("Kernels: %d, %v", len(ks), err)
	}
	s, err := Crops(dir, 2)
	if err != nil || len(s.Images) != 2 || len(s.Images[0]) != 256*256 {
		t.Fatalf("Crops: %v", err)
	}
	if _, err := FindDir(t.TempDir()); err == nil {
		t.Error("FindDir accepted a folder without filterbank.json")
	}
}
