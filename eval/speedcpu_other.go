//go:build !linux && !darwin

package eval

import "time"

// cpuTime is unknown on this system: 0.
func cpuTime() time.Duration { return 0 }

// peakRSS is unknown on this system: 0.
func peakRSS() uint64 { return 0 }
