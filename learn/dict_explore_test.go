package learn

import (
	"os"
	"strconv"
	"testing"
	"time"
)

// TestExploreProtocol is a development aid (STRIATE_EXPLORE=1): it logs the
// held-out objective along a fit on the speed protocol.
func TestExploreProtocol(t *testing.T) {
	if os.Getenv("STRIATE_EXPLORE") == "" {
		t.Skip("STRIATE_EXPLORE not set")
	}
	pd := loadProtocol(t)
	bs, _ := strconv.Atoi(os.Getenv("BS"))
	steps, _ := strconv.Atoi(os.Getenv("STEPS"))
	every, _ := strconv.Atoi(os.Getenv("EVERY"))
	var paused time.Duration
	start := time.Now()
	cfg := DictConfig{Atoms: 256, Lambda: 1, BatchSize: bs, Steps: steps, Seed: 1, CheckpointEvery: every,
		Coder: CoderConfig{Solver: Solver(os.Getenv("SOLVER"))}}
	cfg.OnCheckpoint = func(ck *DictCheckpoint) error {
		t0 := time.Now()
		d, _ := ck.Dictionary()
		obj, nz := heldOutObjective(t, d, pd.held, 1)
		t.Logf("step %d  fit %.2fs  held-out objective %.3f  nnz %.1f  running %.3f", ck.Step, (t0.Sub(start) - paused).Seconds(), obj, nz, ck.RunObj)
		paused += time.Since(t0)
		return nil
	}
	t0 := time.Now()
	d, err := cfg.Fit(pd.train, 256, nil)
	if err != nil {
		t.Fatal(err)
	}
	fit := time.Since(t0) - paused
	obj, nz := heldOutObjective(t, d, pd.held, 1)
	t.Logf("final: fit %.2fs, held-out objective %.3f, nnz %.1f", fit.Seconds(), obj, nz)
}
