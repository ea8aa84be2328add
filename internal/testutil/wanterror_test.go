package testutil

import (
	"errors"
	"fmt"
	"testing"
)

// recorder keeps the failures reported to it instead of failing the test.
type recorder struct {
	testing.TB
	failures []string
}

func (r *recorder) Helper() {}
func (r *recorder) Errorf(format string, args ...any) {
	r.failures = append(r.failures, fmt.Sprintf(format, args...))
}

func TestWantError(t *testing.T) {
	for _, c := range []struct {
		name  string
		err   error
		wants []string
		fails int
	}{
		{"named", errors.New("dataset: a.png and b.png differ"), []string{"a.png", "b.png"}, 0},
		{"no error", nil, []string{"a.png"}, 1},
		{"other package", errors.New("depth: a.png"), []string{"a.png"}, 1},
		{"one name missing", errors.New("dataset: a.png"), []string{"a.png", "b.png"}, 1},
		{"two names missing", errors.New("dataset: nothing"), []string{"a.png", "b.png"}, 2},
	} {
		r := &recorder{TB: t}
		WantError(r, c.name, c.err, "dataset: ", c.wants...)
		if len(r.failures) != c.fails {
			t.Errorf("%s: %d failures %q, want %d", c.name, len(r.failures), r.failures, c.fails)
		}
	}
}
