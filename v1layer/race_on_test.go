//go:build race

package v1layer

// raceOn: the race detector makes sync.Pool drop items at random, so the
// zero-allocation guard cannot hold under -race.
const raceOn = true
