package eval

import (
	"path/filepath"
	"testing"

	"github.com/striate/striate/datasets"
)

// TestTrainChecksBeforeWork: Train refuses an output in a missing folder
// before it loads any data, so a bad path costs no loading or fitting; the
// fit itself is covered through the command's train tests.
func TestTrainChecksBeforeWork(t *testing.T) {
	opened := 0
	open := func(string, int, int) (*datasets.Set, error) { opened++; return nil, nil }
	out := filepath.Join(t.TempDir(), "missing", "m.striate")
	_, err := Train(TrainConfig{Preset: "default", Data: "mnist", Out: out}, open, quietMonitor{})
	if err == nil {
		t.Fatal("Train accepted an output in a missing folder")
	}
	if opened != 0 {
		t.Fatalf("Train loaded %d data sets before refusing the output", opened)
	}
	if _, err := Train(TrainConfig{Preset: "no-such-preset", Data: "mnist", Out: out}, open, quietMonitor{}); err == nil {
		t.Fatal("Train accepted an unknown preset")
	}
}

// TestAutoPreset: the documented mapping of --preset auto.
func TestAutoPreset(t *testing.T) {
	for spec, want := range map[string]string{"mnist": "digits", "fashion": "garments", "/srv/depot/photos": "default"} {
		if got := AutoPreset(spec); got != want {
			t.Errorf("AutoPreset(%q) = %q, want %q", spec, got, want)
		}
	}
}
