package datasets

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// TestSuiteListing checks the development suite against its specification
// (issue text and CorruptionKind's table): 15 corruptions × 5 severities,
// and the grid noise σ 0.05…0.6 by 0.05, blur σ 0.5…2.5 by 0.25, contrast
// 0.1…0.9, shift 1…6 px, rotation 5…45° by 5°, scale 0.6…1.5 without 1; every
// name unique and parsing back to its operation.
func TestSuiteListing(t *testing.T) {
	all := DevelopmentSuite()
	counts := map[string]int{}
	names := map[string]bool{}
	levels := map[string][]float64{}
	for _, c := range all {
		counts[c.Group]++
		if names[c.Name] {
			t.Errorf("name %q twice", c.Name)
		}
		names[c.Name] = true
		if c.Name != c.Op.String() {
			t.Errorf("name %q, op %q", c.Name, c.Op.String())
		}
		switch op := c.Op.(type) {
		case Corruption:
			got, err := ParseCorruption(c.Name)
			if err != nil || got != op || c.Group != GroupMNISTC || float64(op.Severity) != c.Level {
				t.Errorf("%q: parsed %v, %v (group %s level %g)", c.Name, got, err, c.Group, c.Level)
			}
		case Perturbation:
			got, err := ParsePerturbation(c.Name)
			if err != nil || got != op || c.Group != GroupGrid || op.Level != c.Level {
				t.Errorf("%q: parsed %v, %v (group %s level %g)", c.Name, got, err, c.Group, c.Level)
			}
			levels[c.Kind] = append(levels[c.Kind], c.Level)
		default:
			t.Errorf("%q: op of type %T", c.Name, c.Op)
		}
	}
	if counts[GroupMNISTC] != 75 || counts[GroupGrid] != 54 {
		t.Errorf("groups %v, want 75 MNIST-C and 54 grid conditions", counts)
	}
	want := map[string]string{
		"noise":    "[0.05 0.1 0.15 0.2 0.25 0.3 0.35 0.4 0.45 0.5 0.55 0.6]",
		"blur":     "[0.5 0.75 1 1.25 1.5 1.75 2 2.25 2.5]",
		"contrast": "[0.1 0.2 0.3 0.4 0.5 0.6 0.7 0.8 0.9]",
		"shift":    "[1 2 3 4 5 6]",
		"rot":      "[5 10 15 20 25 30 35 40 45]",
		"scale":    "[0.6 0.7 0.8 0.9 1.1 1.2 1.3 1.4 1.5]",
	}
	for k, w := range want {
		if got := fmt.Sprint(levels[k]); got != w {
			t.Errorf("%s levels %s, want %s", k, got, w)
		}
	}
	pub, err := MNISTCSuite(PublishedSeverity)
	if err != nil || len(pub) != 15 || pub[0].Name != "shot_noise-3" || pub[14].Name != "canny_edges-3" {
		t.Errorf("published suite: %d conditions, %v", len(pub), err)
	}
	if _, err := MNISTCSuite(0); err == nil || !strings.Contains(err.Error(), "1…5") {
		t.Errorf("severity 0: %v", err)
	}
}

// testSet is a small synthetic set of n 28×28 images.
func testSet(n int) *Set {
	s := &Set{Name: "synthetic", N: n, H: 28, W: 28, Pix: make([]uint8, n*784), Labels: make([]int, n), Classes: []string{"a", "b"}}
	for i := range s.Pix {
		s.Pix[i] = uint8((i*7 + (i/784)*13) % 256)
	}
	for i := range s.Labels {
		s.Labels[i] = i % 2
	}
	return s
}

// TestPerturbedIsPerImageAndWorkerFree checks Set.Perturbed: image i equals
// op.Apply with ImageSeed(seed, i), stored as bytes, whatever the number of
// workers; labels kept; bad operations rejected.
func TestPerturbedIsPerImageAndWorkerFree(t *testing.T) {
	s := testSet(37)
	ops := []ImageOp{Corruption{Kind: CorruptShotNoise}, Corruption{Kind: CorruptGlassBlur, Severity: 5},
		Perturbation{Kind: Noise, Level: 0.3}, Perturbation{Kind: Rotate, Level: 20}}
	for _, op := range ops {
		one, err := s.Perturbed(op, 5, 1)
		if err != nil {
			t.Fatal(err)
		}
		three, err := s.Perturbed(op, 5, 3)
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(one.Pix, three.Pix) || !slices.Equal(one.Labels, s.Labels) {
			t.Fatalf("%v: 1 and 3 workers differ", op)
		}
		src, dst := make([]float32, 784), make([]float32, 784)
		for _, i := range []int{0, 17, 36} {
			s.Float(src, i)
			op.Apply(dst, src, 28, 28, ImageSeed(5, i))
			got := one.Float(nil, i)
			for j := range dst {
				if d := got[j] - clip01(float64(dst[j])); d > 0.5/255+1e-7 || d < -0.5/255-1e-7 {
					t.Fatalf("%v image %d pixel %d: set %v, Apply %v", op, i, j, got[j], dst[j])
				}
				if _, ok := op.(Corruption); ok && got[j] != dst[j] {
					t.Fatalf("%v image %d pixel %d: set %v, Apply %v (a corruption's grey levels are kept exactly)", op, i, j, got[j], dst[j])
				}
			}
		}
		again, _ := s.Perturbed(op, 6, 2)
		if slices.Equal(again.Pix, one.Pix) && op != ops[3] {
			t.Errorf("%v: seeds 5 and 6 give the same set", op)
		}
	}
	if _, err := s.Perturbed(nil, 0, 0); err == nil {
		t.Error("nil op accepted")
	}
	if _, err := s.Perturbed(Corruption{Kind: CorruptFog, Severity: 9}, 0, 0); err == nil || !strings.Contains(err.Error(), "1…5") {
		t.Errorf("severity 9: %v", err)
	}
	bad := testSet(2)
	bad.Labels = bad.Labels[:1]
	if _, err := bad.Perturbed(Corruption{Kind: CorruptFog}, 0, 0); err == nil {
		t.Error("inconsistent set accepted")
	}
}

// TestWriteSuite writes the development suite's test images for the LeNet-5
// peer (testdata/peer/lenet5.py). It runs only when STRIATE_SUITE_OUT names
// a folder:
//
//	STRIATE_SUITE_OUT=/tmp/suite go test -run TestWriteSuite -timeout 60m ./datasets
//
// For each dataset in $STRIATE_SUITE_DATA (default "mnist,fashion") it
// writes DIR/<dataset>/ with the clean training split
// (train-images.idx.gz, train-labels.idx.gz), the test labels
// (test-labels.idx.gz), the clean test images (clean.idx.gz), one
// <condition>.idx.gz per DevelopmentSuite condition (test split, seed
// SuiteSeed, or $STRIATE_SUITE_SEED), and suite.json listing them.
// $STRIATE_SUITE_LIMIT=N keeps only the first N images of each split (a
// smoke run). $STRIATE_SUITE=heldout writes HeldOutSuite's conditions in
// place of DevelopmentSuite's.
func TestWriteSuite(t *testing.T) {
	dir := os.Getenv("STRIATE_SUITE_OUT")
	if dir == "" {
		t.Skip("set STRIATE_SUITE_OUT to a folder to write the development suite")
	}
	seed := SuiteSeed
	if v := os.Getenv("STRIATE_SUITE_SEED"); v != "" {
		var err error
		if seed, err = strconv.ParseUint(v, 10, 64); err != nil {
			t.Fatalf("STRIATE_SUITE_SEED %q: %v", v, err)
		}
	}
	suite := DevelopmentSuite()
	switch v := os.Getenv("STRIATE_SUITE"); v {
	case "", "dev":
	case "heldout":
		suite, _ = HeldOutSuite()
	default:
		t.Fatalf("STRIATE_SUITE %q: want dev or heldout", v)
	}
	data := "mnist,fashion"
	if v := os.Getenv("STRIATE_SUITE_DATA"); v != "" {
		data = v
	}
	for _, name := range strings.Split(data, ",") {
		load := map[string]func(Split, string) (*Set, error){"mnist": LoadMNIST, "fashion": LoadFashionMNIST}[name]
		if load == nil {
			t.Fatalf("STRIATE_SUITE_DATA: unknown dataset %q (mnist, fashion)", name)
		}
		train, err := load(Train, "")
		if err != nil {
			t.Fatal(err)
		}
		test, err := load(Test, "")
		if err != nil {
			t.Fatal(err)
		}
		if v := os.Getenv("STRIATE_SUITE_LIMIT"); v != "" { // a smoke run on the first images
			n, err := strconv.Atoi(v)
			if err != nil || n < 1 {
				t.Fatalf("STRIATE_SUITE_LIMIT %q is not a positive number of images", v)
			}
			first := func(s *Set) *Set {
				idx := make([]int, min(n, s.N))
				for i := range idx {
					idx[i] = i
				}
				return s.Subset(idx)
			}
			train, test = first(train), first(test)
		}
		out := filepath.Join(dir, name)
		if err := os.MkdirAll(out, 0o755); err != nil {
			t.Fatal(err)
		}
		if err := WriteIDXSet(filepath.Join(out, "train-images.idx.gz"), filepath.Join(out, "train-labels.idx.gz"), train); err != nil {
			t.Fatal(err)
		}
		if err := WriteIDXSet(filepath.Join(out, "clean.idx.gz"), filepath.Join(out, "test-labels.idx.gz"), test); err != nil {
			t.Fatal(err)
		}
		type entry struct {
			Name, Group, Kind, Unit, File string
			Level                         float64
		}
		manifest := struct {
			Dataset string
			Seed    uint64
			Clean   string
			Suite   []entry
		}{Dataset: name, Seed: seed, Clean: "clean.idx.gz"}
		for _, c := range suite {
			p, err := test.Perturbed(c.Op, seed, 0)
			if err != nil {
				t.Fatal(err)
			}
			file := c.Name + ".idx.gz"
			if err := WriteIDXFile(filepath.Join(out, file), &IDX{Type: IDXUint8, Dims: []int{p.N, p.H, p.W}, Data: p.Pix}); err != nil {
				t.Fatal(err)
			}
			manifest.Suite = append(manifest.Suite, entry{Name: c.Name, Group: c.Group, Kind: c.Kind, Unit: c.Unit, File: file, Level: c.Level})
		}
		raw, err := json.MarshalIndent(manifest, "", "  ")
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(out, "suite.json"), raw, 0o644); err != nil {
			t.Fatal(err)
		}
		t.Logf("%s: %d conditions written to %s", name, len(manifest.Suite), out)
	}
}
