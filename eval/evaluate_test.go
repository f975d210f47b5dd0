package eval

import (
	"reflect"
	"strings"
	"testing"

	"github.com/striate/striate/datasets"
)

func TestRobustLevels(t *testing.T) {
	for mode, want := range map[string]map[datasets.PerturbKind][]float64{"": nil, "none": nil, "quick": QuickLevels, "full": StandardLevels} {
		got, err := RobustLevels(mode)
		if err != nil || !reflect.DeepEqual(got, want) {
			t.Errorf("RobustLevels(%q) = %v, %v; want %v", mode, got, err, want)
		}
	}
	if _, err := RobustLevels("extreme"); err == nil || !strings.Contains(err.Error(), "want none, quick or full") {
		t.Errorf("RobustLevels(extreme): %v; want an error listing none, quick or full", err)
	}
}

// TestNamedSuite checks the suites against Mu & Gilmer 2019 (MNIST-C): 15
// corruptions, named as in their release (shot_noise … canny_edges), at
// severity 3 for the published parameters.
func TestNamedSuite(t *testing.T) {
	published := []string{"shot_noise", "impulse_noise", "glass_blur", "motion_blur", "shear", "scale", "rotate",
		"brightness", "translate", "stripe", "fog", "spatter", "dotted_line", "zigzag", "canny_edges"}
	mc, err := NamedSuite("mnistc")
	if err != nil {
		t.Fatal(err)
	}
	if len(mc) != len(published) {
		t.Fatalf("mnistc: %d conditions; want the %d MNIST-C corruptions", len(mc), len(published))
	}
	for i, c := range mc {
		if c.Kind != published[i] || c.Level != 3 || c.Group != datasets.GroupMNISTC {
			t.Errorf("mnistc condition %d: %s %s level %g; want %s at severity 3", i, c.Group, c.Kind, c.Level, published[i])
		}
	}
	dev, err := NamedSuite("dev")
	if err != nil {
		t.Fatal(err)
	}
	grid, err := NamedSuite("grid")
	if err != nil {
		t.Fatal(err)
	}
	// 15 corruptions × 5 severities, then the grid.
	if len(dev) != 15*5+len(grid) || len(grid) == 0 || dev[75].Name != grid[0].Name {
		t.Errorf("dev: %d conditions, grid %d; want 75 MNIST-C conditions followed by the grid", len(dev), len(grid))
	}
	for _, name := range []string{"", "none"} {
		if s, err := NamedSuite(name); s != nil || err != nil {
			t.Errorf("NamedSuite(%q) = %d conditions, %v; want none", name, len(s), err)
		}
	}
	held, err := NamedSuite("heldout")
	if err != nil || len(held) != 35 || held[0].Group != datasets.GroupHeldOut {
		t.Errorf("heldout: %d conditions, %v; want the 7 held-out kinds at 5 severities", len(held), err)
	}
	all, err := NamedSuite("all")
	if err != nil || len(all) != len(dev)+len(held) || all[len(dev)].Name != held[0].Name {
		t.Errorf("all: %d conditions, %v; want dev then heldout", len(all), err)
	}
	if _, err := NamedSuite("mnist-c"); err == nil || !strings.Contains(err.Error(), "want none, dev, mnistc, grid, heldout or all") {
		t.Errorf("NamedSuite(mnist-c): %v; want an error listing the names", err)
	}
}

// TestMostProbable checks the order against a stable descending sort, the
// order numpy.argsort(-p, kind="stable") gives (from memory: ties keep the
// lower index first).
func TestMostProbable(t *testing.T) {
	p := []float32{0.1, 0.4, 0.1, 0.4, 0}
	for k, want := range map[int][]int{1: {1}, 3: {1, 3, 0}, 5: {1, 3, 0, 2, 4}, 9: {1, 3, 0, 2, 4}} {
		if got := MostProbable(p, k); !reflect.DeepEqual(got, want) {
			t.Errorf("MostProbable(%v, %d) = %v; want %v", p, k, got, want)
		}
	}
}
