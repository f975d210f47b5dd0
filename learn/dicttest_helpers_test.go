package learn

import (
	"fmt"
	"math"
)

type progressFunc func(done, total int, msg string)

func (f progressFunc) Step(done, total int, msg string) { f(done, total, msg) }

func fmtSscanf(s, format string, a ...any) (int, error) { return fmt.Sscanf(s, format, a...) }

func abs64(v float64) float64 { return math.Abs(v) }
