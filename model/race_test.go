//go:build race

package model

// raceEnabled reports a -race build, whose runtime allocates on its own.
const raceEnabled = true
