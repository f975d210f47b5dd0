package learn

import (
	"bytes"
	"encoding/json"
	"testing"
)

// checkpointSeed returns a valid encoded checkpoint of a small fit.
func checkpointSeed(t testing.TB) []byte {
	X, y := blobs(60, 3, 2, 1, 9)
	var saved []byte
	cfg := HeadConfig{Kind: KindMLP, Hidden: 3, Epochs: 3, Batch: 16}
	_, _, err := cfg.FitWith(X, y, 2, HeadFitOptions{CheckpointEvery: 1, Checkpoint: func(c *HeadCheckpoint) error {
		b, err := c.MarshalBinary()
		saved = b
		return err
	}})
	if err != nil {
		t.Fatal(err)
	}
	return saved
}

// FuzzHeadCheckpoint: UnmarshalBinary never panics, and whatever it accepts
// re-encodes to the same bytes.
func FuzzHeadCheckpoint(f *testing.F) {
	seed := checkpointSeed(f)
	f.Add(seed)
	f.Add(seed[:len(seed)/2])
	f.Add([]byte(headCkptMagic))
	f.Fuzz(func(t *testing.T, data []byte) {
		var c HeadCheckpoint
		if err := c.UnmarshalBinary(data); err != nil {
			return
		}
		out, err := c.MarshalBinary()
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(out, data) {
			t.Fatalf("accepted checkpoint re-encodes differently (%d vs %d bytes)", len(out), len(data))
		}
	})
}

func TestHeadConfigJSONRoundTrip(t *testing.T) {
	c := HeadConfig{Kind: KindMLP, Hidden: 64, Epochs: 7, Batch: 32, Optimizer: OptSGD, LR: 0.1, Momentum: -1,
		Schedule: ScheduleCosine, L2: -1, ValFrac: 0.2, Patience: -1, Engine: EngineGorgonia, Seed: 42, ConvergeTol: 1e-3, ConvergeWindow: 4}
	b, err := json.Marshal(c)
	if err != nil {
		t.Fatal(err)
	}
	var back HeadConfig
	if err := json.Unmarshal(b, &back); err != nil {
		t.Fatal(err)
	}
	if back != c {
		t.Errorf("round trip changed the config:\n%+v\n%+v", c, back)
	}
	for _, c := range []HeadConfig{{}, c, {Momentum: -1, L2: -1, ValFrac: -1, Patience: -1}} {
		r, err := c.resolved()
		if err != nil {
			t.Fatal(err)
		}
		if rr, err := r.resolved(); err != nil || rr != r {
			t.Errorf("resolving twice changes the config: %+v → %+v (%v)", r, rr, err)
		}
	}
	b, _ = json.Marshal(HeadConfig{})
	if string(b) != "{}" {
		t.Errorf("zero config marshals to %s, want {}", b)
	}
}
