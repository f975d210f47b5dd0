package v1layer

import "math"

// ComplexConfig sets up the complex-cell stage. The zero value is quadrature
// energy with no length summation, no end-stopping and no divisive normalisation.
type ComplexConfig struct {
	// Mode: "energy" (default): each quadrature pair becomes one channel
	// sqrt(e²+o²) and each unpaired kernel two half-wave rectified channels
	// max(0,r), max(0,−r); "rectified": each kernel one channel max(0,r)
	// (use Gabor.Phases = 4 for all polarities); "linear": each kernel one
	// signed channel r.
	Mode string `json:"mode,omitempty"`
	// Length summation and end-stopping along the preferred orientation.
	Length  LengthConfig  `json:"length"`
	EndStop EndStopConfig `json:"end_stop"`
	// Norm is divisive normalisation across orientations (Heeger 1992).
	Norm NormConfig `json:"norm"`
}

// energyGo is the portable quadrature energy of an even/odd pair
// (Adelson & Bergen 1985): dst[i] = sqrt(e[i]² + o[i]²).
func energyGo(dst, e, o []float32) {
	e, o = e[:len(dst)], o[:len(dst)]
	for i := range dst {
		dst[i] = float32(math.Sqrt(float64(e[i]*e[i] + o[i]*o[i])))
	}
}
