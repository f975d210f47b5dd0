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
//
// One progress may carry several phases of a job (a fit reports its front
// end, template and head phases through one): a Step with another total
// starts a new phase on a new line, so each phase's bar counts its own
// units and never shows more than 100%. A phase that ends before its total
// (a head that stopped once its loss converged) keeps the count it reached
// and its line is ended by the next phase or by Done. Every line is kept
// within the terminal's width (the description is shortened) so that a
// redraw never wraps onto new lines.
type progress struct {
	bar   *progressbar.ProgressBar
	out   io.Writer
	what  string
	cols  int  // terminal width
	total int  // the current phase's total
	open  bool // the current phase's line has not been ended
}

// barCells is the width of the bar itself; barRest the columns the
// percentage, count and times take beside it (" 100% |…| (123456/123456)
// [12m34s:12m34s]").
const (
	barCells = 30
	barRest  = 48
)

// newProgress returns a progress bar on stderr with total steps, or a silent
// one when --quiet is set or stderr is not a terminal.
func (g *globals) newProgress(total int, what string) *progress {
	if g.quiet || !isTerminal(g.stderr) {
		return &progress{}
	}
	cols := 80
	if f, ok := g.stderr.(*os.File); ok {
		if w, _, err := term.GetSize(int(f.Fd())); err == nil && w > 0 {
			cols = w
		}
	}
	p := &progress{out: g.stderr, what: what, cols: cols}
	p.start(total, what)
	return p
}

// start begins a phase of total units.
func (p *progress) start(total int, msg string) {
	p.total = total
	p.open = true
	width := min(barCells, max(5, p.cols-barRest-10))
	p.bar = progressbar.NewOptions(max(total, 1),
		progressbar.OptionSetWriter(p.out),
		progressbar.OptionSetDescription(p.fit(msg, width)),
		progressbar.OptionShowCount(),
		progressbar.OptionSetWidth(width),
		progressbar.OptionThrottle(100e6),
		progressbar.OptionUseANSICodes(true),
		progressbar.OptionShowElapsedTimeOnFinish(),
		progressbar.OptionOnCompletion(p.endLine),
	)
}

// fit shortens msg so that the whole line fits in the terminal.
func (p *progress) fit(msg string, width int) string {
	room := max(8, p.cols-barRest-width-1)
	if r := []rune(msg); len(r) > room {
		return string(r[:room-1]) + "…"
	}
	return msg
}

// endLine ends the current phase's line once.
func (p *progress) endLine() {
	if p.open {
		p.open = false
		io.WriteString(p.out, "\n")
	}
}

// Step advances the bar to done of total and shows msg; a new total starts
// a new phase (see progress).
func (p *progress) Step(done, total int, msg string) {
	if p.bar == nil {
		return
	}
	if total > 0 && (total != p.total || (!p.open && done < total)) {
		if p.open {
			_ = p.bar.Exit()
		}
		if msg == "" {
			msg = p.what
		}
		p.start(total, msg)
	} else if msg != "" {
		p.bar.Describe(p.fit(msg, min(barCells, max(5, p.cols-barRest-10))))
	}
	_ = p.bar.Set(min(max(done, 0), max(p.total, 1)))
}

// Done ends the bar where it stands: a phase that ended early keeps the
// count it reached (a bar tells what was done, not a full bar).
func (p *progress) Done() {
	if p.bar != nil && p.open {
		_ = p.bar.Exit()
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
