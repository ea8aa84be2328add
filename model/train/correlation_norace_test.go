//go:build !race

package train

// raceEnabled is true under the race detector; see correlation_race_test.go.
const raceEnabled = false
