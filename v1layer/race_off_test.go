//go:build !race

package v1layer

const raceOn = false
