package nn

import (
	"sync"
	"sync/atomic"
)

// Team runs numbered work units on a fixed set of goroutines started once, so
// a training step that fans out allocates nothing. Which goroutine runs a unit
// is left to chance; callers keep results deterministic by giving every unit
// its own output (the units are fixed by the problem, never by the number of
// workers). A Team is used by one caller at a time; Close stops it.
type Team struct {
	workers int
	wake    chan struct{}
	wg      sync.WaitGroup
	// the current Run's units
	f    func(unit int)
	n    int64
	next atomic.Int64
}

// NewTeam starts a team of workers goroutines (the caller of Run counts as
// one, so workers−1 are started); workers ≤ 1 runs every unit on the caller.
func NewTeam(workers int) *Team {
	t := &Team{workers: max(1, workers)}
	if t.workers > 1 {
		t.wake = make(chan struct{})
		for i := 1; i < t.workers; i++ {
			go t.serve()
		}
	}
	return t
}

// Workers returns the number of goroutines Run uses, the caller included.
func (t *Team) Workers() int {
	if t == nil {
		return 1
	}
	return t.workers
}

func (t *Team) serve() {
	for range t.wake {
		t.drain()
		t.wg.Done()
	}
}

func (t *Team) drain() {
	for {
		u := t.next.Add(1) - 1
		if u >= t.n {
			return
		}
		t.f(int(u))
	}
}

// Run calls f(0), …, f(n−1), spread over the team, and returns when all have
// returned. A nil Team runs them in order on the caller. f should be a func
// value made once (a method value built per call allocates).
func (t *Team) Run(n int, f func(unit int)) {
	if t == nil || t.workers == 1 || n <= 1 {
		for u := 0; u < n; u++ {
			f(u)
		}
		return
	}
	t.f, t.n = f, int64(n)
	t.next.Store(0)
	helpers := min(t.workers, n) - 1
	t.wg.Add(helpers)
	for i := 0; i < helpers; i++ {
		t.wake <- struct{}{}
	}
	t.drain()
	t.wg.Wait()
	t.f = nil
}

// Close stops the team's goroutines; Run must not be called afterwards.
// Closing a nil or one-worker team does nothing.
func (t *Team) Close() {
	if t != nil && t.wake != nil {
		close(t.wake)
		t.wake = nil
	}
}
