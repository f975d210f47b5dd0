package v1layer

import (
	"fmt"
	"math"
)

// Kind says what produced a channel.
type Kind uint8

const (
	KindDoG       Kind = iota + 1 // centre-surround difference of Gaussians
	KindGabor                     // hand-set Gabor simple cell
	KindLearned                   // atom learned from natural images (package learn)
	KindEnergy                    // complex cell: quadrature energy of a pair
	KindRectified                 // complex-cell stand-in: half-wave rectified simple cell
	KindEndStop                   // end-stopped (hypercomplex) cell
)

var kindNames = [...]string{"", "dog", "gabor", "learned", "energy", "rectified", "endstop"}

func (k Kind) String() string {
	if int(k) < len(kindNames) && k != 0 {
		return kindNames[k]
	}
	return fmt.Sprintf("kind(%d)", uint8(k))
}

// Channel describes one kernel of a bank, or one output map of a stage.
// Angles are in radians with the image y axis pointing up (so θ = π/2 is a
// vertical carrier, i.e. horizontal stripes); lengths are in pixels.
// Fields that do not apply to a kind are zero.
type Channel struct {
	Kind        Kind    `json:"kind"`
	Orientation float64 `json:"orientation"`        // carrier direction θ, radians in [0, π)
	Phase       float64 `json:"phase"`              // ψ, radians: 0 even (cos), π/2 odd (sin)
	Wavelength  float64 `json:"wavelength"`         // λ, pixels
	Sigma       float64 `json:"sigma"`              // envelope σ (Gabor) or centre σ (DoG), pixels
	Aspect      float64 `json:"aspect"`             // envelope aspect ratio γ
	Polarity    int     `json:"polarity"`           // +1 on-centre / positive half-wave, -1 off, 0 none
	Scale       int     `json:"scale"`              // index of the scale this channel belongs to
	Pair        int     `json:"pair"`               // index of the quadrature partner in the bank, -1 if none
	FitR2       float64 `json:"fit_r2"`             // learned atoms: R² of the 2-D Gabor fit, else 0
	Surround    float64 `json:"surround,omitempty"` // DoG: surround σ_s, pixels
}

// Kernel is one square correlation kernel of odd size Size×Size, row-major:
// weight at row offset v, column offset u (both in [-r, r], r = Size/2) is
// W[(v+r)*Size+(u+r)].
type Kernel struct {
	Size int       `json:"size"`
	W    []float32 `json:"w"`
	Meta Channel   `json:"meta"`
}

// Bank is an ordered set of kernels with their metadata. A hand-set Gabor
// bank and a bank learned by package learn have the same type, so every
// later stage treats them alike.
type Bank struct {
	Kernels []Kernel `json:"kernels"`
}

// MaxKernelSize bounds kernel sizes accepted by Validate; 255 px is larger
// than any receptive field this package builds and keeps hostile bank files
// from asking for huge allocations.
const MaxKernelSize = 255

// Validate checks that every kernel is odd-sized, within MaxKernelSize, has
// Size² finite weights and that Pair indices are in range and symmetric.
func (b *Bank) Validate() error {
	if b == nil || len(b.Kernels) == 0 {
		return fmt.Errorf("v1layer: bank has no kernels")
	}
	for i, k := range b.Kernels {
		if k.Size < 1 || k.Size%2 == 0 || k.Size > MaxKernelSize {
			return fmt.Errorf("v1layer: bank kernel %d has size %d; want an odd size in [1,%d]", i, k.Size, MaxKernelSize)
		}
		if len(k.W) != k.Size*k.Size {
			return fmt.Errorf("v1layer: bank kernel %d has %d weights; want %d (size %d squared)", i, len(k.W), k.Size*k.Size, k.Size)
		}
		for j, w := range k.W {
			if math.IsNaN(float64(w)) || math.IsInf(float64(w), 0) {
				return fmt.Errorf("v1layer: bank kernel %d weight %d is %v; want a finite number", i, j, w)
			}
		}
		if p := k.Meta.Pair; p != -1 {
			if p < 0 || p >= len(b.Kernels) || p == i {
				return fmt.Errorf("v1layer: bank kernel %d names pair %d; want -1 or another kernel index in [0,%d)", i, p, len(b.Kernels))
			}
			if b.Kernels[p].Meta.Pair != i {
				return fmt.Errorf("v1layer: bank kernel %d pairs with %d but %d pairs with %d; pairs must be mutual", i, p, p, b.Kernels[p].Meta.Pair)
			}
		}
	}
	return nil
}

// MaxSize returns the largest kernel size in the bank.
func (b *Bank) MaxSize() int {
	m := 0
	for _, k := range b.Kernels {
		if k.Size > m {
			m = k.Size
		}
	}
	return m
}
