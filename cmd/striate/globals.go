package main

import (
	"flag"
	"fmt"
	"io"
	"runtime"

	"github.com/striate/striate/eval"
	"github.com/striate/striate/internal/progress"
)

// globals are the flags every command shares. A command declares the ones it
// uses with the add* helpers so that -h lists only what applies.
type globals struct {
	seed    uint64
	workers int
	config  string
	out     string
	quiet   bool

	stdout, stderr io.Writer
}

func (g *globals) addSeed(fs *flag.FlagSet) {
	fs.Uint64Var(&g.seed, "seed", 1, "random seed; the same seed and data give the same result")
}

func (g *globals) addWorkers(fs *flag.FlagSet) {
	fs.IntVar(&g.workers, "workers", runtime.GOMAXPROCS(0), "goroutines for batch work")
}

func (g *globals) addConfig(fs *flag.FlagSet) {
	fs.StringVar(&g.config, "config", "", "JSON configuration `file` (unknown keys are rejected)")
}

func (g *globals) addOut(fs *flag.FlagSet, def string) {
	fs.StringVar(&g.out, "out", def, "output `dir`ectory")
}

func (g *globals) addQuiet(fs *flag.FlagSet) {
	fs.BoolVar(&g.quiet, "quiet", false, "no progress bars")
}

// jobMonitor shows a library job's steps as progress bars and its result
// lines on stdout.
type jobMonitor struct{ g *globals }

func (m jobMonitor) Start(total int, what string) eval.JobProgress {
	return m.g.newProgress(total, what)
}

func (m jobMonitor) Logf(format string, a ...any) { fmt.Fprintf(m.g.stdout, format+"\n", a...) }

// newProgress returns a progress bar on stderr with total steps, silent when
// --quiet is set or stderr is not a terminal.
func (g *globals) newProgress(total int, what string) *progress.Bar {
	if g.quiet {
		return progress.New(io.Discard, total, what)
	}
	return progress.New(g.stderr, total, what)
}
