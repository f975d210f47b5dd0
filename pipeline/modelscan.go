package pipeline

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"slices"
)

// StoredScan is a model's scan section: the "no item" threshold chosen on
// validation scenes (Scanner.ChooseThreshold) and the scan settings it was
// chosen with, as Model.WithScan stores them and a format-version-4 model
// file carries them (header key "scan"). A Scanner of the model takes
// Config.Threshold as the default of a zero ScanConfig.Threshold; the
// other settings are a record (Differs tells a caller when the settings in
// use are not the ones the threshold suits).
type StoredScan struct {
	// Config is the scanner's configuration with every default filled in;
	// its Threshold is the chosen one.
	Config ScanConfig `json:"config"`
	// Scenes is the number of validation scenes, Truth the items they
	// hold; at the chosen threshold the scanner reported Found items, of
	// which Matched matched the truth (same class, IoU ≥ 0.5), F1 =
	// 2·Matched/(Found+Truth).
	Scenes int     `json:"scenes"`
	Truth  int     `json:"truth"`
	Found  int     `json:"found"`
	Match  int     `json:"matched"`
	F1     float64 `json:"f1"`
	// Source says where the validation scenes came from, for a person
	// reading the file (such as "auto: 200 scenes of 2000 held-out
	// training images, seed 1" or a folder's path); at most
	// MaxScanSourceLen bytes.
	Source string `json:"source"`
	// Index is the hex SHA-256 of the scene folder's index (scenes.json)
	// when the scenes came from a folder, "" otherwise: a scorer can then
	// refuse to report test figures on the very scenes that chose the
	// threshold.
	Index string `json:"index_sha256,omitempty"`
}

// MaxScanSourceLen bounds StoredScan.Source (a path or a sentence).
const MaxScanSourceLen = 4096

// Scan returns the model's scan section and whether it has one.
func (m *Model) Scan() (StoredScan, bool) {
	if m.scan == nil {
		return StoredScan{}, false
	}
	s := *m.scan
	s.Config.Frames, s.Config.Sizes = slices.Clone(s.Config.Frames), slices.Clone(s.Config.Sizes)
	return s, true
}

// scanThreshold is the default of a zero ScanConfig.Threshold: the stored
// threshold, else DefaultThreshold (also for a nil model, as
// ScanConfig.withDefaults gets when a test resolves settings alone).
func (m *Model) scanThreshold() float64 {
	if m != nil && m.scan != nil {
		return m.scan.Config.Threshold
	}
	return DefaultThreshold
}

// WithScan returns a copy of m carrying the scan section s (m itself is
// unchanged: models are immutable). s.Config is resolved and checked as
// NewScanner does, and its Threshold must lie in (0, 1]; the counts must
// be consistent (0 ≤ Matched ≤ Found, Matched ≤ Truth, F1 in [0, 1]).
func (m *Model) WithScan(s StoredScan) (*Model, error) {
	if err := checkStoredScan(m, &s); err != nil {
		return nil, err
	}
	c := &Model{plan: m.plan, classes: m.classes, tmpl: m.tmpl, guard: m.guard, head: m.head, q: m.q, scan: &s}
	c.scratch.New = func() any { return new(work) }
	return c, nil
}

// checkStoredScan resolves s.Config for m and checks s.
func checkStoredScan(m *Model, s *StoredScan) error {
	t := s.Config.Threshold
	if !(t > 0 && t <= 1) {
		return fmt.Errorf("pipeline: stored scan threshold %v out of range (0,1]; choose it with Scanner.ChooseThreshold", t)
	}
	bare := &Model{plan: m.plan, classes: m.classes}
	sc, err := NewScanner(bare, s.Config)
	if err != nil {
		return fmt.Errorf("pipeline: stored scan config: %w", err)
	}
	s.Config = sc.Config()
	switch {
	case s.Scenes < 0 || s.Truth < 0 || s.Found < 0 || s.Match < 0 || s.Match > s.Found || s.Match > s.Truth:
		return fmt.Errorf("pipeline: stored scan counts scenes %d, truth %d, found %d, matched %d; want non-negative counts with matched ≤ found and matched ≤ truth", s.Scenes, s.Truth, s.Found, s.Match)
	case !(s.F1 >= 0 && s.F1 <= 1):
		return fmt.Errorf("pipeline: stored scan F1 %v out of range [0,1]", s.F1)
	case len(s.Source) > MaxScanSourceLen:
		return fmt.Errorf("pipeline: stored scan source is %d bytes; at most %d (MaxScanSourceLen)", len(s.Source), MaxScanSourceLen)
	case s.Index != "" && !isHexSHA256(s.Index):
		return fmt.Errorf("pipeline: stored scan index_sha256 %q; want 64 lower-case hex digits or nothing", s.Index)
	}
	return nil
}

func isHexSHA256(s string) bool {
	if len(s) != 64 {
		return false
	}
	for _, r := range s {
		if !(r >= '0' && r <= '9' || r >= 'a' && r <= 'f') {
			return false
		}
	}
	return true
}

// Differs returns the JSON names of the settings (other than threshold) in
// which c, a Scanner's resolved configuration (Scanner.Config), differs
// from those the stored threshold was chosen with, in the order of the
// JSON encoding; nil when they agree. A threshold suits the settings it
// was chosen with: when they differ, choose it again.
func (s StoredScan) Differs(c ScanConfig) []string {
	a, b := s.Config, c
	a.Threshold, b.Threshold = 0, 0
	ka, kb := jsonFields(a), jsonFields(b)
	var out []string
	for _, k := range ka.keys {
		if !bytes.Equal(ka.vals[k], kb.vals[k]) {
			out = append(out, k)
		}
	}
	for _, k := range kb.keys {
		if _, ok := ka.vals[k]; !ok {
			out = append(out, k)
		}
	}
	return out
}

type fieldSet struct {
	keys []string
	vals map[string]json.RawMessage
}

// jsonFields returns the top-level JSON fields of c in encoding order.
func jsonFields(c ScanConfig) fieldSet {
	raw, _ := json.Marshal(c) // a struct of numbers and slices always encodes
	fs := fieldSet{vals: map[string]json.RawMessage{}}
	_ = json.Unmarshal(raw, &fs.vals)
	dec := json.NewDecoder(bytes.NewReader(raw))
	dec.Token() // {
	for dec.More() {
		k, _ := dec.Token()
		fs.keys = append(fs.keys, k.(string))
		var skip json.RawMessage
		_ = dec.Decode(&skip)
	}
	return fs
}

// scanSection encodes the model's scan section for the file header; nil
// without one.
func (m *Model) scanSection() (json.RawMessage, error) {
	if m.scan == nil {
		return nil, nil
	}
	b, err := json.Marshal(m.scan)
	if err != nil {
		return nil, fmt.Errorf("pipeline: encoding the scan section: %v", err)
	}
	return b, nil
}

// attachScan reads the scan section of a decoded file into m: a
// format-version-4 file must hold one, older versions none.
func attachScan(m *Model, c *fileContents) (*Model, error) {
	has := len(c.Scan) > 0
	switch {
	case c.Version >= FormatVersionScan && !has:
		return nil, malformed("header.scan", "missing; a version-%d file holds the scan section (the chosen \"no item\" threshold)", c.Version)
	case c.Version < FormatVersionScan && has:
		return nil, malformed("header.scan", "present in a version-%d file; the scan section needs version %d", c.Version, FormatVersionScan)
	case !has:
		return m, nil
	}
	var s StoredScan
	if err := decodeStrict(c.Scan, &s, "model scan section"); err != nil {
		return nil, malformed("header.scan", "%v", err)
	}
	if math.IsNaN(s.F1) {
		return nil, malformed("header.scan.f1", "NaN; want a number in [0,1]")
	}
	out, err := m.WithScan(s)
	if err != nil {
		return nil, malformed("header.scan", "%v", err)
	}
	return out, nil
}
