package nn

import (
	"sync/atomic"
	"testing"
	"time"
)

// TestTeamRunsEveryUnitOnce: whatever the number of workers (more than
// GOMAXPROCS included) and units (fewer than the workers included), every
// Run calls each of its units exactly once and returns only after all have
// returned; Runs back to back (the helpers spinning) and Runs after a pause
// longer than teamSpin (the helpers parked) alike. A lost wake-up hangs the
// test; a unit run twice, skipped or still running after Run returned fails
// the counts.
func TestTeamRunsEveryUnitOnce(t *testing.T) {
	for _, workers := range []int{1, 2, 3, 5} {
		team := NewTeam(workers)
		var hits [64]atomic.Int32
		var running atomic.Int32
		for run := 0; run < 300; run++ {
			n := []int{0, 1, 2, 3, 7, 64}[run%6]
			f := func(u int) {
				running.Add(1)
				if u%3 == 0 {
					time.Sleep(time.Microsecond)
				}
				hits[u].Add(1)
				running.Add(-1)
			}
			team.Run(n, f)
			if r := running.Load(); r != 0 {
				t.Fatalf("workers %d run %d: %d units still running after Run returned", workers, run, r)
			}
			for u := range hits {
				want := int32(0)
				if u < n {
					want = 1
				}
				if got := hits[u].Swap(0); got != want {
					t.Fatalf("workers %d run %d (n = %d): unit %d ran %d times", workers, run, n, u, got)
				}
			}
			if run%50 == 49 {
				time.Sleep(3 * teamSpin) // let the helpers park
			}
		}
		team.Close()
		team.Close() // a second Close does nothing
	}
}
