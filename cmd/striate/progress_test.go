package main

import (
	"bytes"
	"io"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"
	"unicode/utf8"

	"github.com/creack/pty"
)

// ansiCSI matches the terminal control sequences a progress bar may emit
// (ECMA-48 control sequences, ESC [ … final byte; common practice).
var ansiCSI = regexp.MustCompile("\x1b\\[[0-9;?]*[ -/]*[@-~]")

// percent matches a bar's percentage figure.
var percent = regexp.MustCompile(`(\d+)%`)

// TestProgressUnderTerminal trains on the shape folder under a pseudo-
// terminal 100 columns wide, as a user at a terminal sees it, and checks
// what a terminal would show: every redraw (a segment between carriage
// returns and newlines, control sequences removed) fits in the width, so
// nothing wraps onto new lines; no bar claims more than 100%; each bar ends
// with a newline, so the result lines start at the left margin; and the
// bars redraw in place (far fewer lines than updates). The same run with
// stderr not a terminal prints no bar at all (TestCLITrainFolder's
// --quiet, and every other CLI test, whose stderr is a buffer).
func TestProgressUnderTerminal(t *testing.T) {
	cliFixture(t)
	const cols = 100
	out := filepath.Join(t.TempDir(), "shapes.striate")
	cmd := exec.Command(cliBin, "train", "--data", filepath.Join(cliDir, "train"), "--out", out, "--workers", "2", "--seed", "3")
	f, err := pty.StartWithSize(cmd, &pty.Winsize{Rows: 40, Cols: cols})
	if err != nil {
		t.Skipf("no pseudo-terminal here: %v", err)
	}
	var buf bytes.Buffer
	done := make(chan struct{})
	go func() { io.Copy(&buf, f); close(done) }() // ends with EIO when the child exits
	werr := cmd.Wait()
	select {
	case <-done:
	case <-time.After(10 * time.Second):
	}
	f.Close()
	if werr != nil {
		t.Fatalf("train under a terminal: %v\n%s", werr, buf.String())
	}
	raw := strings.ReplaceAll(buf.String(), "\r\n", "\n") // the pty's output processing adds \r before \n
	if !strings.Contains(raw, "model written to") {
		t.Fatalf("no result line in:\n%q", raw)
	}
	redraws := 0
	for _, line := range strings.Split(raw, "\n") {
		for _, seg := range strings.Split(line, "\r") {
			vis := ansiCSI.ReplaceAllString(seg, "")
			if !strings.Contains(vis, "%") || !strings.Contains(vis, "|") {
				continue // a result line, not a bar
			}
			if n := utf8.RuneCountInString(vis); n > cols {
				t.Errorf("a redraw is %d columns wide, more than the terminal's %d: %q", n, cols, vis)
			}
			for _, m := range percent.FindAllStringSubmatch(vis, -1) {
				if p, _ := strconv.Atoi(m[1]); p > 100 {
					t.Errorf("a bar shows %d%%: %q", p, vis)
				}
			}
			redraws++
		}
	}
	for _, result := range []string{"trained on ", "model written to "} {
		i := strings.Index(raw, result)
		if i > 0 && raw[i-1] != '\n' {
			t.Errorf("%q does not start a line (a bar did not end with a newline): %q", result, raw[max(0, i-80):i+len(result)])
		}
	}
	if lines := strings.Count(raw, "\n"); redraws > 0 && lines > 20 {
		t.Errorf("%d lines for %d bar updates: bars should redraw in place\n%s", lines, redraws, raw)
	}
	if redraws == 0 {
		t.Error("no progress bar under a terminal")
	}
	t.Logf("%d bar redraws, %d lines", redraws, strings.Count(raw, "\n"))
}
