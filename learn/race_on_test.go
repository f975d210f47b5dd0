//go:build race

package learn

// raceOn: the race detector makes sync.Pool drop items at random, so the
// zero-allocation guard cannot hold under -race.
const raceOn = true
