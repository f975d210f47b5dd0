package progress

import (
	"bytes"
	"io"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"
	"unicode/utf8"

	"github.com/creack/pty"
)

// ansiCSI matches ECMA-48 control sequences, ESC [ … final byte (common
// practice).
var ansiCSI = regexp.MustCompile("\x1b\\[[0-9;?]*[ -/]*[@-~]")

var percent = regexp.MustCompile(`(\d+)%`)

// TestBarOnTerminal drives a bar on a pseudo-terminal 60 columns wide
// through two phases — one that ends early, one with a long description —
// and checks what the terminal shows: every redraw fits the width, no
// figure passes 100%, the early phase keeps the count it reached, and each
// phase's line is ended.
func TestBarOnTerminal(t *testing.T) {
	ptmx, tty, err := pty.Open()
	if err != nil {
		t.Skipf("no pseudo-terminal here: %v", err)
	}
	defer ptmx.Close()
	const cols = 60
	if err := pty.Setsize(tty, &pty.Winsize{Rows: 20, Cols: cols}); err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	done := make(chan struct{})
	go func() { io.Copy(&buf, ptmx); close(done) }()

	b := New(tty, 10, "front end")
	for i := 1; i <= 4; i++ { // stops at 4 of 10, as a converged head does
		b.Step(i, 10, "")
	}
	long := strings.Repeat("a very long description of the head phase ", 3)
	for i := 1; i <= 50; i++ {
		b.Step(i, 50, long)
		time.Sleep(3 * time.Millisecond) // let some redraws through the throttle
	}
	b.Done()
	tty.Close()
	select {
	case <-done:
	case <-time.After(5 * time.Second):
	}
	raw := strings.ReplaceAll(buf.String(), "\r\n", "\n")
	lines := strings.Split(strings.TrimRight(raw, "\n"), "\n")
	if len(lines) != 2 {
		t.Fatalf("want one line per phase (2), got %d:\n%q", len(lines), raw)
	}
	if !strings.Contains(lines[0], "(4/10)") {
		t.Errorf("the phase that ended early should keep its count 4/10: %q", ansiCSI.ReplaceAllString(lines[0], ""))
	}
	for _, line := range lines {
		for _, seg := range strings.Split(line, "\r") {
			seg = ansiCSI.ReplaceAllString(seg, "")
			if n := utf8.RuneCountInString(seg); n > cols {
				t.Errorf("a redraw of %d columns on a %d-column terminal: %q", n, cols, seg)
			}
			for _, m := range percent.FindAllStringSubmatch(seg, -1) {
				if v, _ := strconv.Atoi(m[1]); v > 100 {
					t.Errorf("a bar claims %d%%: %q", v, seg)
				}
			}
		}
	}
}

// TestBarSilentOffTerminal: a bar on a buffer (a log, a pipe) writes nothing.
func TestBarSilentOffTerminal(t *testing.T) {
	var buf bytes.Buffer
	b := New(&buf, 5, "x")
	for i := 1; i <= 5; i++ {
		b.Step(i, 5, "step")
	}
	b.Done()
	if buf.Len() != 0 {
		t.Fatalf("a bar off a terminal wrote %q", buf.String())
	}
}
