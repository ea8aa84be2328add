package train

import "github.com/parallaxdepth/parallax/model"

// SetWeights copies w into the Session's graph (w must have the
// Session's configuration) and leaves the solver's state alone; replace
// Solver to restart it. Online adaptation (model/adapt) uses it to score
// other weights and to roll back without building a second graph. It
// returns an error if w does not fit the network.
func (s *Session) SetWeights(w *model.Weights) error { return s.net.SetWeights(w) }
