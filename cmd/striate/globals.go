package main

import (
	"flag"
	"fmt"
	"io"
	"os"
	"runtime"

	"github.com/schollz/progressbar/v3"
	"github.com/striate/striate/eval"
	"golang.org/x/term"
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

// progress is what the library packages report through: a step count and a
// message. It matches the small Progress interfaces the packages declare.
type progress struct {
	bar *progressbar.ProgressBar
}

// newProgress returns a progress bar on stderr with total steps, or a silent
// one when --quiet is set or stderr is not a terminal.
func (g *globals) newProgress(total int, what string) *progress {
	if g.quiet || !isTerminal(g.stderr) {
		return &progress{}
	}
	bar := progressbar.NewOptions(total,
		progressbar.OptionSetWriter(g.stderr),
		progressbar.OptionSetDescription(what),
		progressbar.OptionShowCount(),
		progressbar.OptionSetWidth(30),
		progressbar.OptionThrottle(100e6),
		progressbar.OptionShowElapsedTimeOnFinish(),
		progressbar.OptionOnCompletion(func() { io.WriteString(os.Stderr, "\n") }),
	)
	return &progress{bar: bar}
}

// Step advances the bar to done of total and shows msg.
func (p *progress) Step(done, total int, msg string) {
	if p.bar == nil {
		return
	}
	if total > 0 && int64(total) != p.bar.GetMax64() {
		p.bar.ChangeMax(total)
	}
	if msg != "" {
		p.bar.Describe(msg)
	}
	_ = p.bar.Set(done)
}

// Done finishes the bar.
func (p *progress) Done() {
	if p.bar != nil {
		_ = p.bar.Finish()
	}
}

// jobMonitor shows a library job's steps as progress bars and its result
// lines on stdout.
type jobMonitor struct{ g *globals }

func (m jobMonitor) Start(total int, what string) eval.JobProgress {
	return m.g.newProgress(total, what)
}

func (m jobMonitor) Logf(format string, a ...any) { fmt.Fprintf(m.g.stdout, format+"\n", a...) }

func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	return ok && term.IsTerminal(int(f.Fd()))
}
