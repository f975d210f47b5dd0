package pipeline_test

import (
	"bytes"
	"crypto/sha256"
	"encoding/binary"
	"errors"
	"slices"
	"strings"
	"testing"

	"github.com/striate/striate/pipeline"
)

// storedShapeModel is the shapes model carrying a scan section with
// threshold 0.75 (an arbitrary value in range; these are contract tests of
// the file format and the defaults, not of the choice).
func storedShapeModel(t *testing.T) (*pipeline.Model, pipeline.StoredScan) {
	t.Helper()
	m := shapeModel(t)
	s := pipeline.StoredScan{Config: pipeline.ScanConfig{Threshold: 0.75, MaxItems: 7}, Scenes: 20, Truth: 50, Found: 48, Match: 45,
		F1: 0.918, Source: "auto: 20 scenes of held-out training shapes", Index: strings.Repeat("ab", 32)}
	ms, err := m.WithScan(s)
	if err != nil {
		t.Fatal(err)
	}
	return ms, s
}

func saveBytes(t *testing.T, m *pipeline.Model) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := m.Save(&b); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// resumFile rewrites the trailing SHA-256 of an edited model file.
func resumFile(b []byte) []byte {
	s := sha256.Sum256(b[:len(b)-sha256.Size])
	copy(b[len(b)-sha256.Size:], s[:])
	return b
}

// TestStoredScanRoundTrip: the scan section survives Save and Load in a
// version-4 file, its threshold is the default of a zero ScanConfig's,
// an explicit threshold still wins, and the model without it keeps
// version 2 and the package default.
func TestStoredScanRoundTrip(t *testing.T) {
	plain := shapeModel(t)
	if _, ok := plain.Scan(); ok {
		t.Fatal("a freshly fitted model has a scan section")
	}
	pb := saveBytes(t, plain)
	if v := binary.LittleEndian.Uint32(pb[8:]); v != pipeline.FormatVersion {
		t.Fatalf("model without a scan section saved as version %d, want %d (older readers must still read it)", v, pipeline.FormatVersion)
	}
	ms, want := storedShapeModel(t)
	if _, ok := plain.Scan(); ok {
		t.Fatal("WithScan changed the model it was called on")
	}
	b := saveBytes(t, ms)
	if v := binary.LittleEndian.Uint32(b[8:]); v != pipeline.FormatVersionScan {
		t.Fatalf("model with a scan section saved as version %d, want %d", v, pipeline.FormatVersionScan)
	}
	if !bytes.Equal(b, saveBytes(t, ms)) {
		t.Fatal("two saves of one model differ")
	}
	got, err := pipeline.Load(bytes.NewReader(b))
	if err != nil {
		t.Fatal(err)
	}
	s, ok := got.Scan()
	if !ok {
		t.Fatal("loaded model lost its scan section")
	}
	if s.Config.Threshold != want.Config.Threshold || s.Config.MaxItems != 7 || s.Scenes != want.Scenes || s.Match != want.Match ||
		s.Source != want.Source || s.Index != want.Index {
		t.Fatalf("scan section after load = %+v, want %+v", s, want)
	}
	if s.Config.ItemSize != 28 || !slices.Equal(s.Config.Frames, pipeline.DefaultFrames) {
		t.Fatalf("stored config not resolved: item size %d, frames %v", s.Config.ItemSize, s.Config.Frames)
	}
	sc, err := pipeline.NewScanner(got, pipeline.ScanConfig{})
	if err != nil {
		t.Fatal(err)
	}
	if th := sc.Config().Threshold; th != 0.75 {
		t.Fatalf("zero ScanConfig.Threshold gave %v, want the stored 0.75", th)
	}
	if d := s.Differs(sc.Config()); !slices.Equal(d, []string{"max_items", "max_fixations"}) {
		t.Fatalf("Differs = %v, want [max_items max_fixations] (the default scanner has 10 and 30)", d)
	}
	sc, _ = pipeline.NewScanner(got, pipeline.ScanConfig{Threshold: 0.4})
	if th := sc.Config().Threshold; th != 0.4 {
		t.Fatalf("explicit threshold 0.4 gave %v", th)
	}
	sc, _ = pipeline.NewScanner(plain, pipeline.ScanConfig{})
	if th := sc.Config().Threshold; th != pipeline.DefaultThreshold {
		t.Fatalf("without a scan section the threshold is %v, want %v", th, pipeline.DefaultThreshold)
	}
	sc, _ = pipeline.NewScanner(got, s.Config)
	if d := s.Differs(sc.Config()); d != nil {
		t.Fatalf("Differs of the stored settings themselves = %v", d)
	}
	// Probabilities are those of the model without the section.
	img := shapeSet(3, 9).Float(nil, 0)
	p1, _ := plain.PredictBatch([][]float32{img}, 28, 28, 1)
	p2, _ := got.PredictBatch([][]float32{img}, 28, 28, 1)
	if !slices.Equal(p1[0], p2[0]) {
		t.Fatalf("the scan section changed the predictions: %v vs %v", p1[0], p2[0])
	}
}

// TestStoredScanRefused: WithScan and Load refuse bad scan sections with
// errors naming the field, and a version-4 section in an older version's
// file is malformed.
func TestStoredScanRefused(t *testing.T) {
	m := shapeModel(t)
	for _, bad := range []pipeline.StoredScan{
		{Config: pipeline.ScanConfig{Threshold: 0}},
		{Config: pipeline.ScanConfig{Threshold: 1.5}},
		{Config: pipeline.ScanConfig{Threshold: 0.5, NMSIoU: 2}},
		{Config: pipeline.ScanConfig{Threshold: 0.5}, Found: 3, Match: 4, Truth: 9},
		{Config: pipeline.ScanConfig{Threshold: 0.5}, F1: 1.2},
		{Config: pipeline.ScanConfig{Threshold: 0.5}, Index: "not-hex"},
	} {
		if _, err := m.WithScan(bad); err == nil || !strings.HasPrefix(err.Error(), "pipeline: stored scan") {
			t.Errorf("WithScan(%+v) = %v, want a pipeline: stored scan error", bad, err)
		}
	}
	ms, _ := storedShapeModel(t)
	b := saveBytes(t, ms)
	for _, c := range []struct{ from, to, want string }{
		{`"threshold":0.75`, `"threshold":7.50`, "header.scan"},
		{`"scenes":20`, `"scenez":20`, "scenez"},
	} {
		e := bytes.Replace(slices.Clone(b), []byte(c.from), []byte(c.to), 1)
		if bytes.Equal(e, b) {
			t.Fatalf("%s not in the header", c.from)
		}
		_, err := pipeline.Load(bytes.NewReader(resumFile(e)))
		if !errors.Is(err, pipeline.ErrMalformed) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s → %s: Load = %v, want ErrMalformed naming %s", c.from, c.to, err, c.want)
		}
	}
	e := slices.Clone(b)
	binary.LittleEndian.PutUint32(e[8:], pipeline.FormatVersion)
	_, err := pipeline.Load(bytes.NewReader(resumFile(e)))
	if !errors.Is(err, pipeline.ErrMalformed) || !strings.Contains(err.Error(), "needs version 4") {
		t.Errorf("scan section in a version-2 file: Load = %v, want ErrMalformed saying it needs version 4", err)
	}
}

// TestStoredScanInt8: an int8 model with a scan section is a version-4
// file that loads as int8 with its section and predicts as before.
func TestStoredScanInt8(t *testing.T) {
	q, err := shapeModel(t).Quantize(shapeSet(90, 4), pipeline.QuantizeOptions{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	qs, err := q.WithScan(pipeline.StoredScan{Config: pipeline.ScanConfig{Threshold: 0.6}})
	if err != nil {
		t.Fatal(err)
	}
	b := saveBytes(t, qs)
	if v := binary.LittleEndian.Uint32(b[8:]); v != pipeline.FormatVersionScan {
		t.Fatalf("int8 model with a scan section saved as version %d, want %d", v, pipeline.FormatVersionScan)
	}
	got, err := pipeline.Load(bytes.NewReader(b))
	if err != nil {
		t.Fatal(err)
	}
	if s, ok := got.Scan(); !ok || s.Config.Threshold != 0.6 {
		t.Fatalf("int8 model's scan section after load: %+v, %v", s, ok)
	}
	img := shapeSet(3, 9).Float(nil, 1)
	p1, _ := q.PredictBatch([][]float32{img}, 28, 28, 1)
	p2, _ := got.PredictBatch([][]float32{img}, 28, 28, 1)
	if !slices.Equal(p1[0], p2[0]) {
		t.Fatalf("int8 predictions changed through the file: %v vs %v", p1[0], p2[0])
	}
}
