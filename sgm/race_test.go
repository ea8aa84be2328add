//go:build race

package sgm

const raceEnabled = true
