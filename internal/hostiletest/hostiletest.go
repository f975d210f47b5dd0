// Package hostiletest holds the helpers the reliability tests of several
// packages share: a sweep that runs a reader over a corpus of hostile
// inputs (no panic, typed errors, bounded allocation), the mutations that
// make such a corpus from a good file, and a child process killed with
// SIGKILL at random moments. It is imported by tests only and imports
// nothing of striate's.
package hostiletest

import (
	"bufio"
	"bytes"
	"math/rand/v2"
	"os"
	"os/exec"
	"runtime"
	"syscall"
	"testing"
	"time"
)

// AllocBound is the reliability target for rejecting any hostile input:
// at most 256 MiB allocated (runtime.MemStats.TotalAlloc), the promise in
// the README's Reliability section.
const AllocBound = 256 << 20

// Mutants returns hostile variants of a good file b: truncations and, at
// the same positions, the byte replaced by 0x00, 0xFF and its complement,
// at every position for files of at most n bytes, else at n evenly spaced
// ones. Headers, lengths and checksums are all hit. When fix is not nil it
// is applied to a copy of each edited file as well (for example to rewrite
// a checksum so that later checks are reached).
func Mutants(b []byte, n int, fix func([]byte) []byte) [][]byte {
	step := max(1, len(b)/n)
	var out [][]byte
	for i := 0; i < len(b); i += step {
		out = append(out, b[:i])
		for _, v := range []byte{0x00, 0xFF, ^b[i]} {
			if v == b[i] {
				continue
			}
			m := bytes.Clone(b)
			m[i] = v
			out = append(out, m)
			if fix != nil {
				out = append(out, fix(bytes.Clone(m)))
			}
		}
	}
	return out
}

// Sweep runs read on every input, turning a panic into a test failure,
// checking that every error passes typed and that no input allocates more
// than AllocBound. It logs and returns the number of inputs refused.
func Sweep(t *testing.T, what string, inputs [][]byte, read func([]byte) error, typed func(error) bool) int {
	t.Helper()
	refused := 0
	for i, in := range inputs {
		var err error
		var m0, m1 runtime.MemStats
		runtime.ReadMemStats(&m0)
		func() {
			defer func() {
				if r := recover(); r != nil {
					t.Errorf("%s input %d (%d bytes): panic: %v", what, i, len(in), r)
				}
			}()
			err = read(in)
		}()
		runtime.ReadMemStats(&m1)
		if d := m1.TotalAlloc - m0.TotalAlloc; d > AllocBound {
			t.Errorf("%s input %d: allocated %d bytes; want ≤ %d", what, i, d, AllocBound)
		}
		if err != nil {
			refused++
			if !typed(err) {
				t.Errorf("%s input %d: untyped error %T: %v", what, i, err, err)
			}
		}
	}
	t.Logf("%s: %d hostile inputs, %d refused, no panic", what, len(inputs), refused)
	return refused
}

// KillAtRandom re-executes the test binary trials times with env added to
// its environment (the child's TestMain sees it and works instead of
// testing; it prints "ready" first), kills each child with SIGKILL after a
// random delay below maxDelay, and calls check after each kill.
func KillAtRandom(t *testing.T, env []string, trials int, maxDelay time.Duration, seed uint64, check func(trial int)) {
	t.Helper()
	rng := rand.New(rand.NewPCG(seed, seed))
	for i := 0; i < trials; i++ {
		cmd := exec.Command(os.Args[0], "-test.run=^$")
		cmd.Env = append(os.Environ(), env...)
		out, err := cmd.StdoutPipe()
		if err != nil {
			t.Fatal(err)
		}
		cmd.Stderr = os.Stderr
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		if l, _ := bufio.NewReader(out).ReadString('\n'); l != "ready\n" {
			cmd.Process.Kill()
			cmd.Wait()
			t.Fatalf("child said %q", l)
		}
		time.Sleep(time.Duration(rng.Int64N(int64(maxDelay))))
		cmd.Process.Signal(syscall.SIGKILL)
		cmd.Wait()
		check(i)
	}
}
