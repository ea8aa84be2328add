//go:build !race

package cpu

// opsRace is true under the race detector; see elementwise_race_test.go.
const opsRace = false
