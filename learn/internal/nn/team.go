package nn

import (
	"runtime"
	"sync/atomic"
	"time"
)

// Team runs numbered work units on a fixed set of goroutines started once, so
// a training step that fans out allocates nothing. Which goroutine runs a unit
// is left to chance; callers keep results deterministic by giving every unit
// its own output (the units are fixed by the problem, never by the number of
// workers). A Team is used by one caller at a time; Close stops it.
//
// A training step is a few Runs back to back, each a fraction of a
// millisecond, so the goroutines wait for the next Run (and the caller for
// the helpers' last units) by spinning for up to teamSpin before they park.
// Parking after every Run, as a channel handoff does, costs a wake-up of an
// idle processor per Run (tens of microseconds on a virtual machine) and,
// when the sender runs before the helper is back at its receive, hands the
// rest of the Run to one core: measured on the 2-core EPYC, two workers
// then took longer per head step than one.
type Team struct {
	workers int
	helpers []teamHelper
	// the current Run, written by Run before gen is advanced
	f    func(unit int)
	n    int64
	next atomic.Int64
	gen  atomic.Uint64 // Runs started: a helper joins Run g when gen reaches g
	left atomic.Int32  // helpers that have not finished the current Run
	// the caller parks on done when the helpers outlast its spin
	asleep atomic.Bool
	done   chan struct{}
	closed atomic.Bool
}

// teamHelper is one helper goroutine's parking place.
type teamHelper struct {
	asleep atomic.Bool
	wake   chan struct{}
}

// teamSpin is how long a goroutine of a Team spins for the next Run (or the
// caller for the helpers) before it parks: longer than the serial gaps
// between the Runs of a head step (a few microseconds), short beside the
// wake-up it saves, and a small share of a step's CPU time when it is spent
// waiting for another worker's last unit.
const teamSpin = 50 * time.Microsecond

// NewTeam starts a team of workers goroutines (the caller of Run counts as
// one, so workers−1 are started); workers ≤ 1 runs every unit on the caller.
func NewTeam(workers int) *Team {
	t := &Team{workers: max(1, workers)}
	if t.workers > 1 {
		t.helpers = make([]teamHelper, t.workers-1)
		t.done = make(chan struct{}, 1)
		for i := range t.helpers {
			t.helpers[i].wake = make(chan struct{}, 1)
			go t.serve(&t.helpers[i])
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

func (t *Team) serve(h *teamHelper) {
	var seen uint64
	for {
		g, ok := t.await(h, seen)
		if !ok {
			return
		}
		seen = g
		t.drain()
		if t.left.Add(-1) == 0 && t.asleep.Load() {
			signal(t.done)
		}
	}
}

// await returns the number of the next Run after Run seen, or false once
// the team is closed.
func (t *Team) await(h *teamHelper, seen uint64) (uint64, bool) {
	var deadline time.Time
	for i := 0; ; i++ {
		if g := t.gen.Load(); g != seen {
			return g, true
		}
		if t.closed.Load() {
			return 0, false
		}
		if spinning(i, &deadline) {
			continue
		}
		// Park. Run advances gen before it reads asleep and the helper sets
		// asleep before it reads gen again, so one of them sees the other.
		h.asleep.Store(true)
		if g := t.gen.Load(); g != seen || t.closed.Load() {
			h.asleep.Store(false)
			continue
		}
		<-h.wake // may be a stale token: the loop checks again
		h.asleep.Store(false)
	}
}

// spinning reports whether a wait in its i-th check should go on spinning:
// until teamSpin has passed since the first check (deadline is set then),
// yielding the processor now and then to any other goroutine.
func spinning(i int, deadline *time.Time) bool {
	const every = 64
	if i%every != every-1 {
		return true
	}
	now := time.Now()
	if i == every-1 {
		*deadline = now.Add(teamSpin)
	}
	if now.After(*deadline) {
		return false
	}
	runtime.Gosched()
	return true
}

// signal posts a wake-up token on c (capacity 1) unless one is pending.
func signal(c chan struct{}) {
	select {
	case c <- struct{}{}:
	default:
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
	t.left.Store(int32(len(t.helpers)))
	t.gen.Add(1)
	for i := range t.helpers {
		if t.helpers[i].asleep.Load() {
			signal(t.helpers[i].wake)
		}
	}
	t.drain()
	var deadline time.Time
	for i := 0; t.left.Load() != 0; i++ {
		if spinning(i, &deadline) {
			continue
		}
		t.asleep.Store(true)
		if t.left.Load() == 0 {
			t.asleep.Store(false)
			break
		}
		<-t.done // may be a stale token: the loop checks again
		t.asleep.Store(false)
	}
	t.f = nil
}

// Close stops the team's goroutines; Run must not be called afterwards.
// Closing a nil or one-worker team does nothing.
func (t *Team) Close() {
	if t == nil || t.helpers == nil || t.closed.Swap(true) {
		return
	}
	for i := range t.helpers {
		signal(t.helpers[i].wake)
	}
}
