//go:build !race

package learn

const raceOn = false
