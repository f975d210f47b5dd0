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
	}
	if err := WriteTable(&b, rows); err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(b.String()), "\n")
	if len(lines) != 3 {
		t.Fatalf("want a heading and 2 rows:\n%s", b.String())
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
