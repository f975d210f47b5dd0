package frontbench

import (
	"bytes"
	"strings"
	"testing"
)

// TestWriteTable: figures of 1,000 and more get thousands separators
// (common practice in English-language tables), the ratio is striate over
// the peer, and a row without a peer figure shows dashes.
func TestWriteTable(t *testing.T) {
	var b bytes.Buffer
	rows := []Row{
		{Stage: "front end", Size: "28×28", Threads: 1, Striate: 12345.6, Unit: "img/s", Peer: 2469.1, PeerName: "p", Build: "plain"},
		{Stage: "front end", Size: "256×256", Threads: 2, Striate: 57.25, Unit: "img/s", Build: "simd"},
		{Stage: "latency", Size: "28×28", Threads: 1, Striate: 0.25, Unit: "ms", Peer: 0.5, Lower: true},
		{Stage: "fit", Size: "x", Threads: 1, Striate: 30, Unit: "s", Peer: 66, PeerHigh: 69, Lower: true},
	}
	if err := WriteTable(&b, rows); err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(b.String()), "\n")
	if len(lines) != 5 {
		t.Fatalf("want a heading and 4 rows:\n%s", b.String())
	}
	// Lower-is-better figures: the peer's over striate's; a range is taken
	// at the end nearer striate's figure (66 s against 30 s: 2.20×).
	for i, want := range map[int][]string{3: {"0.25", "0.5", "2.00×"}, 4: {"66.0–69.0", "2.20×"}} {
		for _, w := range want {
			if !strings.Contains(lines[i], w) {
				t.Errorf("row %d lacks %q: %s", i, w, lines[i])
			}
		}
	}
	for _, want := range []string{"12,346", "2,469", "5.00×"} {
		if !strings.Contains(lines[1], want) {
			t.Errorf("row 1 lacks %q: %s", want, lines[1])
		}
	}
	if f := strings.Fields(lines[2]); f[4] != "57.2" || f[5] != "—" || f[6] != "—" {
		t.Errorf("row 2: want 57.2 and dashes for peer and ratio, got %q", f)
	}
}
