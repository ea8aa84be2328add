package train

import (
	"fmt"

	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/internal/cpu"
)

// SetWeights copies w into the Session's graph (w must have the
// Session's configuration) and leaves the solver's state alone; replace
// Solver to restart it. Online adaptation (model/adapt) uses it to score
// other weights and to roll back without building a second graph. It
// returns an error if w does not fit the network.
func (s *Session) SetWeights(w *model.Weights) error { return s.net.SetWeights(w) }

// SetWorkers bounds the goroutines each kernel of the Session's graph
// uses to n (at most GOMAXPROCS; 0 means GOMAXPROCS, the default), the
// stereo matcher's included (model.Matching.SetMaxProcs), so
// that training leaves the other cores to whatever runs beside it (online
// adaptation beside inference). The results are the same bits for any n.
// It returns an error for a negative n.
func (s *Session) SetWorkers(n int) error {
	if n < 0 {
		return fmt.Errorf("train: workers %d must not be negative", n)
	}
	for _, node := range s.net.Graph.AllNodes() {
		if op, ok := node.Op().(*kernelOp); ok {
			op.procs = cpu.Procs(n)
		}
	}
	return nil
}
