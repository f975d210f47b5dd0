// Package progress draws the command's progress bars: one line per phase of
// a job with that phase's own total, kept within the terminal's width and
// redrawn in place with ANSI control sequences, and silence when the output
// is not a terminal.
package progress

import (
	"io"
	"os"
	"time"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"
)

// Bar is a terminal progress display that the library packages report
// through: a step count and a message. It matches the small Progress
// interfaces the packages declare (Step and Done).
//
// One progress may carry several phases of a job (a fit reports its front
// end, template and head phases through one): a Step with another total
// starts a new phase on a new line, so each phase's bar counts its own
// units and never shows more than 100%. A phase that ends before its total
// (a head that stopped once its loss converged) keeps the count it reached
// and its line is ended by the next phase or by Done. Every line is kept
// within the terminal's width (the description is shortened) so that a
// redraw never wraps onto new lines.
type Bar struct {
	bar   *progressbar.ProgressBar
	out   io.Writer
	what  string
	cols  int  // terminal width
	total int  // the current phase's total
	open  bool // the current phase's line has not been ended

	// The bar draws every Set; Bar throttles itself so that the last count
	// of a phase is always drawn before its line ends.
	done, shown int       // the phase's count and the count last drawn
	drawn       time.Time // when a count was last drawn
}

// throttle is the least time between two redraws of a phase.
const throttle = 100 * time.Millisecond

// barCells is the width of the bar itself; barRest the columns the
// percentage, count and times take beside it (" 100% |…| (123456/123456)
// [12m34s:12m34s]").
const (
	barCells = 30
	barRest  = 48
)

// New returns a bar on w with total steps that starts with the description
// what, or a silent one when w is not a terminal (a file, a pipe, a buffer):
// a bar is for a person watching, never for a log.
func New(w io.Writer, total int, what string) *Bar {
	if !isTerminal(w) {
		return &Bar{}
	}
	cols := 80
	if f, ok := w.(*os.File); ok {
		if c, _, err := term.GetSize(int(f.Fd())); err == nil && c > 0 {
			cols = c
		}
	}
	p := &Bar{out: w, what: what, cols: cols}
	p.start(total, what)
	return p
}

// start begins a phase of total units.
func (p *Bar) start(total int, msg string) {
	p.total = total
	p.open = true
	p.done, p.shown, p.drawn = 0, 0, time.Time{}
	width := min(barCells, max(5, p.cols-barRest-10))
	p.bar = progressbar.NewOptions(max(total, 1),
		progressbar.OptionSetWriter(p.out),
		progressbar.OptionSetDescription(p.fit(msg, width)),
		progressbar.OptionShowCount(),
		progressbar.OptionSetWidth(width),
		progressbar.OptionThrottle(0),
		progressbar.OptionUseANSICodes(true),
		progressbar.OptionShowElapsedTimeOnFinish(),
		progressbar.OptionOnCompletion(p.endLine),
	)
}

// fit shortens msg so that the whole line fits in the terminal.
func (p *Bar) fit(msg string, width int) string {
	room := max(8, p.cols-barRest-width-1)
	if r := []rune(msg); len(r) > room {
		return string(r[:room-1]) + "…"
	}
	return msg
}

// endLine ends the current phase's line once.
func (p *Bar) endLine() {
	if p.open {
		p.open = false
		io.WriteString(p.out, "\n")
	}
}

// Step advances the bar to done of total and shows msg; a new total starts
// a new phase (see Bar).
func (p *Bar) Step(done, total int, msg string) {
	if p.bar == nil {
		return
	}
	if total > 0 && (total != p.total || (!p.open && done < total)) {
		p.endPhase()
		if msg == "" {
			msg = p.what
		}
		p.start(total, msg)
	} else if msg != "" {
		p.bar.Describe(p.fit(msg, min(barCells, max(5, p.cols-barRest-10))))
	}
	p.done = min(max(done, 0), max(p.total, 1))
	if p.done >= p.total || time.Since(p.drawn) >= throttle {
		p.draw()
	}
}

// draw shows the phase's current count.
func (p *Bar) draw() {
	_ = p.bar.Set(p.done)
	p.shown, p.drawn = p.done, time.Now()
}

// endPhase draws the count the phase reached, if a redraw was held back,
// and ends its line.
func (p *Bar) endPhase() {
	if !p.open {
		return
	}
	if p.shown != p.done {
		p.draw()
	}
	if p.open {
		_ = p.bar.Exit()
	}
}

// Done ends the bar where it stands: a phase that ended early keeps the
// count it reached (a bar tells what was done, not a full bar).
func (p *Bar) Done() {
	if p.bar != nil {
		p.endPhase()
	}
}

func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	return ok && term.IsTerminal(int(f.Fd()))
}
