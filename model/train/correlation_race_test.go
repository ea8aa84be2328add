//go:build race

package train

// raceEnabled is true under the race detector, whose sync.Pool drops items
// at random, so allocation counts are not meaningful there.
const raceEnabled = true
