package main

import (
	"bytes"
	"encoding/json"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/striate/striate/pipeline"
	"github.com/striate/striate/v1layer"
)

// TestLearnQuick runs `striate learn --quick` end to end and checks the
// outputs: a valid bank of 64 learned 9×9 kernels (8×8 atoms padded to odd
// size), a decodable mosaic PNG of the expected size, and the summary.
func TestLearnQuick(t *testing.T) {
	dir := t.TempDir()
	var out, errb bytes.Buffer
	code := run([]string{"learn", "--quick", "--quiet", "--workers", "2", "--out", dir}, &out, &errb)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	t.Log(out.String())
	b, err := os.ReadFile(filepath.Join(dir, "bank.json"))
	if err != nil {
		t.Fatal(err)
	}
	var bank v1layer.Bank
	if err := json.Unmarshal(b, &bank); err != nil {
		t.Fatal(err)
	}
	if err := bank.Validate(); err != nil {
		t.Fatal(err)
	}
	if len(bank.Kernels) != 64 || bank.Kernels[0].Size != 9 || bank.Kernels[0].Meta.Kind != v1layer.KindLearned {
		t.Fatalf("bank has %d kernels of size %d kind %v; want 64 of 9 learned", len(bank.Kernels), bank.Kernels[0].Size, bank.Kernels[0].Meta.Kind)
	}
	// config.json is a pipeline configuration that ParseConfig accepts
	// (strict: unknown keys rejected) with this bank as the simple cells.
	cfg, err := pipeline.LoadConfig(filepath.Join(dir, "config.json"))
	if err != nil {
		t.Fatalf("config.json: %v", err)
	}
	if cfg.Front.Bank == nil || len(cfg.Front.Bank.Kernels) != 64 || cfg.Front.Bank.Kernels[5].W[40] != bank.Kernels[5].W[40] {
		t.Fatalf("config.json does not carry the learned bank")
	}
	f, err := os.Open(filepath.Join(dir, "atoms.png"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatal(err)
	}
	// 8 columns of 9-px kernels at scale 4 plus a 4-px gap each and one edge gap.
	if w := img.Bounds().Dx(); w != 8*(9*4+4)+4 {
		t.Errorf("mosaic width %d; want %d", w, 8*(9*4+4)+4)
	}
	if !strings.Contains(out.String(), "Gabor-like") {
		t.Errorf("summary lacks the Gabor-like figure: %q", out.String())
	}
	if code := run([]string{"learn", "--atoms", "0"}, &out, &errb); code != exitUsage {
		t.Errorf("--atoms 0: exit %d; want %d", code, exitUsage)
	}
	errb.Reset()
	if code := run([]string{"learn", "--forget", "-1"}, &out, &errb); code != exitUsage || !strings.Contains(errb.String(), "--forget -1") {
		t.Errorf("--forget -1: exit %d (want %d), stderr %q", code, exitUsage, errb.String())
	}
}
