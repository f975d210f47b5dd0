package eval

import (
	"fmt"
	"math"
	"strings"

	"github.com/striate/striate/internal/frontbench"
)

// Long runs that give the figures a default bench run does not.
const (
	runFull     = "striate bench --full (60,000-image fits, minutes)"
	runInt8Long = "STRIATE_LONG=1 GOEXPERIMENT=simd go test -v -timeout 2h -run Int8AccuracyLong ./pipeline, or striate bench --full"
	runDemo     = "/usr/bin/time -v striate demo (maximum resident set size)"
	runPlain    = "the plain build: go run ./cmd/striate bench"
	runSIMD     = "the SIMD build: GOEXPERIMENT=simd go run ./cmd/striate bench"
)

// Speed targets (issue-free restatement of the project's goals for its
// 2-core machine, SIMD build unless stated).
const (
	targetMNISTWall   = 35.0  // s, full MNIST fit, digits preset
	targetFashionWall = 70.0  // s, full Fashion-MNIST fit, garments preset
	targetCPUFraction = 0.33  // × LeNet-5's CPU seconds to 99.0%
	targetMNISTAcc    = 0.993 // the accuracy the CPU-seconds target is for
	targetCPUUse      = 1.80  // CPU seconds per wall second while fitting
	targetFolder      = 5.0   // s, 150-image fit
	targetInt8Acc     = 0.002 // int8 accuracy within 0.2 points of float's
	targetInt8Size    = 0.30  // int8 file / float file
	targetInt8P50     = 0.15  // ms, SIMD build
	targetInt8Plain   = 1.5   // float p50 / int8 p50, plain build
	targetDemoBytes   = 1.5e9 // peak memory of the full demo
	targetFrontPlain  = 1.3   // plain front end / PyTorch 1.13, every row
)

// BenchTargets checks the figures of one bench run (the front-end rows and
// the facts of Bench) against the speed targets. A target whose figure the
// run did not measure names the run that gives it.
func BenchTargets(front []frontbench.Row, f BenchFacts) []Target {
	lenetLo := f.LeNetCPU
	simd := f.Build == "simd"
	var ts []Target
	add := func(what, goal, measured, status string) {
		ts = append(ts, Target{What: what, Goal: goal, Measured: measured, Status: status})
	}
	full := func(what, goal string, ff *FullFit, measure func(*FullFit) (string, bool)) {
		switch {
		case ff == nil:
			add(what, goal, runFull, TargetNotMeasured)
		case !simd:
			m, _ := measure(ff)
			add(what, goal, m+" (plain build; the target is for "+runSIMD+")", TargetNotMeasured)
		default:
			m, ok := measure(ff)
			add(what, goal, m, verdict(ok))
		}
	}
	full("full MNIST fit, digits preset", fmt.Sprintf("≤ %g s wall", targetMNISTWall), f.MNIST, func(ff *FullFit) (string, bool) {
		return fmt.Sprintf("%.1f s (%.2f%%)", ff.Wall.Seconds(), 100*ff.Accuracy), ff.Wall.Seconds() <= targetMNISTWall
	})
	full("full Fashion-MNIST fit, garments preset", fmt.Sprintf("≤ %g s wall", targetFashionWall), f.Fashion, func(ff *FullFit) (string, bool) {
		return fmt.Sprintf("%.1f s (%.2f%%)", ff.Wall.Seconds(), 100*ff.Accuracy), ff.Wall.Seconds() <= targetFashionWall
	})
	full("CPU seconds to ≥ 99.3% on MNIST", fmt.Sprintf("≤ %.2f × LeNet-5's %.0f CPU s", targetCPUFraction, lenetLo), f.MNIST, func(ff *FullFit) (string, bool) {
		x := ff.CPU.Seconds() / lenetLo
		if ff.Accuracy < targetMNISTAcc {
			return fmt.Sprintf("%.1f CPU s but %.2f%% < 99.3%%", ff.CPU.Seconds(), 100*ff.Accuracy), false
		}
		return fmt.Sprintf("%.1f CPU s (%.2f×)", ff.CPU.Seconds(), x), x <= targetCPUFraction
	})
	full("CPU use while fitting (full MNIST fit)", fmt.Sprintf("≥ %.0f%% of one core", 100*targetCPUUse), f.MNIST, func(ff *FullFit) (string, bool) {
		u := ff.CPU.Seconds() / ff.Wall.Seconds()
		return fmt.Sprintf("%.0f%%", 100*u), u >= targetCPUUse
	})
	switch {
	case f.Folder150 == 0:
		add("150-image fit", fmt.Sprintf("≤ %g s", targetFolder), "striate bench without --quick", TargetNotMeasured)
	case !simd:
		add("150-image fit", fmt.Sprintf("≤ %g s", targetFolder), fmt.Sprintf("%.1f s (plain build; the target is for %s)", f.Folder150.Seconds(), runSIMD), TargetNotMeasured)
	default:
		add("150-image fit", fmt.Sprintf("≤ %g s", targetFolder), fmt.Sprintf("%.1f s", f.Folder150.Seconds()), verdict(f.Folder150.Seconds() <= targetFolder))
	}
	int8acc := func(name string, ff *FullFit) {
		what, goal := "int8 accuracy, "+name, fmt.Sprintf("within %.1f pt of float", 100*targetInt8Acc)
		if ff == nil {
			add(what, goal, runInt8Long, TargetNotMeasured)
			return
		}
		d := 100 * (ff.Accuracy - ff.Int8Accuracy)
		add(what, goal, fmt.Sprintf("%.2f%% vs %.2f%% (%+.2f pt)", 100*ff.Int8Accuracy, 100*ff.Accuracy, -d), verdict(math.Abs(d) <= 100*targetInt8Acc+1e-9))
	}
	int8acc("MNIST", f.MNIST)
	int8acc("Fashion-MNIST", f.Fashion)
	if f.FloatBytes > 0 {
		x := float64(f.Int8Bytes) / float64(f.FloatBytes)
		add("int8 model file size", fmt.Sprintf("≤ %.0f%% of float's", 100*targetInt8Size),
			fmt.Sprintf("%.2f MB vs %.2f MB (%.0f%%)", float64(f.Int8Bytes)/1e6, float64(f.FloatBytes)/1e6, 100*x), verdict(x <= targetInt8Size))
	} else {
		add("int8 model file size", fmt.Sprintf("≤ %.0f%% of float's", 100*targetInt8Size), "needs MNIST", TargetNotMeasured)
	}
	switch {
	case f.Int8P50 == 0:
		add("int8 latency p50, SIMD build", fmt.Sprintf("≤ %g ms", targetInt8P50), "needs MNIST", TargetNotMeasured)
		add("int8 vs float latency, plain build", fmt.Sprintf("≥ %.1f× faster", targetInt8Plain), "needs MNIST", TargetNotMeasured)
	case simd:
		add("int8 latency p50, SIMD build", fmt.Sprintf("≤ %g ms", targetInt8P50), fmt.Sprintf("%.3f ms (float %.3f ms)", f.Int8P50, f.FloatP50), verdict(f.Int8P50 <= targetInt8P50))
		add("int8 vs float latency, plain build", fmt.Sprintf("≥ %.1f× faster", targetInt8Plain), runPlain, TargetNotMeasured)
	default:
		add("int8 latency p50, SIMD build", fmt.Sprintf("≤ %g ms", targetInt8P50), runSIMD, TargetNotMeasured)
		x := f.FloatP50 / f.Int8P50
		add("int8 vs float latency, plain build", fmt.Sprintf("≥ %.1f× faster", targetInt8Plain), fmt.Sprintf("%.2f× (%.3f vs %.3f ms)", x, f.Int8P50, f.FloatP50), verdict(x >= targetInt8Plain))
	}
	add("peak memory of the full striate demo", fmt.Sprintf("≤ %.1f GB", targetDemoBytes/1e9), runDemo, TargetNotMeasured)
	var fr []string
	ok, n := true, 0
	for _, r := range front {
		x, has := r.Ratio()
		if r.Stage != "front end" || !has {
			continue
		}
		n++
		fr = append(fr, fmt.Sprintf("%.2f×", x))
		ok = ok && x >= targetFrontPlain
	}
	switch {
	case n == 0:
		add("front end, plain build, every row", fmt.Sprintf("≥ %.1f× PyTorch 1.13", targetFrontPlain), "no front-end rows in this run", TargetNotMeasured)
	case simd:
		add("front end, plain build, every row", fmt.Sprintf("≥ %.1f× PyTorch 1.13", targetFrontPlain), runPlain, TargetNotMeasured)
	default:
		add("front end, plain build, every row", fmt.Sprintf("≥ %.1f× PyTorch 1.13", targetFrontPlain), strings.Join(fr, ", "), verdict(ok))
	}
	return ts
}
