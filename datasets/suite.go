package datasets

import (
	"errors"
	"fmt"
	"math"
	"runtime"
	"sync"
	"sync/atomic"
)

// ImageOp alters one image: it writes the altered h×w image src into dst,
// drawing any randomness from seed only. Perturbation and Corruption satisfy
// it (and eval's Perturber, which has the same methods).
type ImageOp interface {
	Apply(dst, src []float32, h, w int, seed uint64)
	String() string
}

// ImageSeed returns the seed that image i of a set gets under a run seed
// (the SplitMix64 finaliser of seed + (i+1)·0x9E3779B97F4A7C15; Steele, Lea
// & Flood 2014), so every image has its own stream whatever the order or the
// number of workers.
func ImageSeed(seed uint64, i int) uint64 {
	z := seed + uint64(i+1)*0x9E3779B97F4A7C15
	z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9
	z = (z ^ (z >> 27)) * 0x94D049BB133111EB
	return z ^ (z >> 31)
}

// Perturbed returns a new Set holding every image of s altered by op, image i
// with seed ImageSeed(seed, i), stored as round(255·v) of the clipped values
// (Corruption outputs are already on that grid, so they are kept exactly),
// with the same labels. The work is spread over workers goroutines (0 means
// GOMAXPROCS); the result is the same for any number. It fails if op is nil
// or invalid (when it has a Validate method) or s is inconsistent.
func (s *Set) Perturbed(op ImageOp, seed uint64, workers int) (*Set, error) {
	if op == nil {
		return nil, errors.New("datasets: Perturbed: no perturbation or corruption given")
	}
	if v, ok := op.(interface{ Validate() error }); ok {
		if err := v.Validate(); err != nil {
			return nil, err
		}
	}
	if err := s.Validate(); err != nil {
		return nil, err
	}
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	workers = max(1, min(workers, s.N))
	out := &Set{Name: s.Name + " (" + op.String() + ")", N: s.N, H: s.H, W: s.W, Pix: make([]uint8, len(s.Pix)),
		Labels: append([]int(nil), s.Labels...), Classes: append([]string(nil), s.Classes...), Source: s.Source}
	n := s.H * s.W
	var next atomic.Int64
	var wg sync.WaitGroup
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			var src []float32
			dst := make([]float32, n)
			for {
				i := int(next.Add(1) - 1)
				if i >= s.N {
					return
				}
				src = s.Float(src, i)
				op.Apply(dst, src, s.H, s.W, ImageSeed(seed, i))
				px := out.Pix[i*n : (i+1)*n]
				for j, v := range dst {
					px[j] = uint8(math.Round(255 * math.Min(1, math.Max(0, float64(v)))))
				}
			}
		}()
	}
	wg.Wait()
	return out, nil
}

// SuiteCondition is one named condition of a development suite.
type SuiteCondition struct {
	Name  string  // Op.String(), unique within a suite: "shot_noise-3", "noise-0.05"
	Group string  // GroupMNISTC, GroupGrid or GroupHeldOut
	Kind  string  // corruption name or perturbation kind: "shot_noise", "rot"
	Unit  string  // unit of Level
	Level float64 // severity 1…5 (MNIST-C, held-out) or the perturbation level (grid)
	Op    ImageOp
}

// SuiteSeed is the run seed of the development suite's reference images:
// striate's scores and the LeNet-5 peer's (testdata/peer/lenet5.py) are
// taken on test.Perturbed(c.Op, SuiteSeed, …) for every condition c.
const SuiteSeed uint64 = 12

// Suite groups.
const (
	GroupMNISTC = "mnist-c"
	GroupGrid   = "grid"
	// GroupHeldOut is the held-out suite (HeldOutSuite), scored only to
	// check settings chosen on the development suite, never to choose them.
	GroupHeldOut = "heldout"
)

// MNISTCSuite returns the 15 MNIST-C corruptions (CorruptionKinds order) at
// each of the given severities (all of 1…5 when none are given), kind-major.
func MNISTCSuite(severities ...int) ([]SuiteCondition, error) {
	severities, err := suiteSeverities("suite", severities)
	if err != nil {
		return nil, err
	}
	var out []SuiteCondition
	for _, k := range CorruptionKinds() {
		for _, v := range severities {
			c := Corruption{Kind: k, Severity: v}
			out = append(out, SuiteCondition{Name: c.String(), Group: GroupMNISTC, Kind: k.String(), Unit: "severity", Level: float64(v), Op: c})
		}
	}
	return out, nil
}

// Grid levels of the six perturbation kinds, as integer steps: level =
// step·num/den for step in [from, to] (integer ratios print as the short
// decimals, 0.15 not 0.15000000000000002). The identity levels (0, and 1 for
// scale and contrast) are left out: the clean images are one condition, not
// six.
var gridSteps = []struct {
	kind               PerturbKind
	unit               string
	from, to, num, den int
}{
	{Noise, "σ, fraction of full scale", 1, 12, 1, 20}, // 0.05 … 0.6 in 0.05
	{Blur, "σ, px", 2, 10, 1, 4},                       // 0.5 … 2.5 in 0.25
	{Contrast, "factor", 1, 9, 1, 10},                  // 0.1 … 0.9 in 0.1
	{Shift, "px", 1, 6, 1, 1},                          // 1 … 6 px, east
	{Rotate, "degrees", 1, 9, 5, 1},                    // 5 … 45° in 5°
	{Scale, "factor", 6, 15, 1, 10},                    // 0.6 … 1.5 in 0.1, without 1
}

// GridSuite returns the six perturbation kinds on a fine grid of levels:
// noise σ 0.05…0.6 in steps of 0.05, blur σ 0.5…2.5 px in 0.25, contrast
// 0.1…0.9 in 0.1, shift 1…6 px (east, as eval's sweeps), rotation 5…45° in
// 5°, scale 0.6…1.5 in 0.1 (identity levels left out).
func GridSuite() []SuiteCondition {
	var out []SuiteCondition
	for _, g := range gridSteps {
		for step := g.from; step <= g.to; step++ {
			l := float64(step*g.num) / float64(g.den)
			if (g.kind == Scale || g.kind == Contrast) && l == 1 {
				continue
			}
			p := Perturbation{Kind: g.kind, Level: l}
			out = append(out, SuiteCondition{Name: p.String(), Group: GroupGrid, Kind: g.kind.String(), Unit: g.unit, Level: l, Op: p})
		}
	}
	return out
}

// DevelopmentSuite returns the whole development suite: the 15 MNIST-C
// corruptions at severities 1…5, then GridSuite. The clean images are not
// part of it.
func DevelopmentSuite() []SuiteCondition {
	m, _ := MNISTCSuite() // all severities: cannot fail
	return append(m, GridSuite()...)
}

// HeldOutSuite returns the held-out suite: the HeldOutKinds corruptions
// (none of them an MNIST-C corruption or a grid kind) at each of the given
// severities (all of 1…5 when none are given), kind-major, in group
// GroupHeldOut. Its images are made as the development suite's, with seed
// SuiteSeed. It is for checking only: no setting of the library is chosen
// on it (see HeldOutKind).
func HeldOutSuite(severities ...int) ([]SuiteCondition, error) {
	severities, err := suiteSeverities("held-out suite", severities)
	if err != nil {
		return nil, err
	}
	var out []SuiteCondition
	for _, k := range HeldOutKinds() {
		for _, v := range severities {
			c := HeldOut{Kind: k, Severity: v}
			out = append(out, SuiteCondition{Name: c.String(), Group: GroupHeldOut, Kind: k.String(), Unit: "severity", Level: float64(v), Op: c})
		}
	}
	return out, nil
}

// suiteSeverities returns the severities a suite is built at: all of 1…5
// when none are given; it fails on one outside that range.
func suiteSeverities(what string, severities []int) ([]int, error) {
	if len(severities) == 0 {
		return []int{1, 2, 3, 4, 5}, nil
	}
	for _, v := range severities {
		if v < MinSeverity || v > MaxSeverity {
			return nil, fmt.Errorf("datasets: %s severity %d outside %d…%d (%d is MNIST-C's published one)", what, v, MinSeverity, MaxSeverity, PublishedSeverity)
		}
	}
	return severities, nil
}
