package train

import (
	"context"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/loss"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/data"
	"github.com/parallaxdepth/parallax/model/evaluation"
)

// trainerConfig is a small instance of the architecture at half the size
// of the committed synthetic pairs (256×128), so the trainer tests stay
// fast.
var trainerConfig = model.Config{Width: 128, Height: 64, Encoder: []int{8, 8, 12, 12, 16}, Decoder: []int{8, 8, 8, 12, 12}}

// openSynth opens a style of testdata/synth (3 pairs with exact ground
// truth, made by package synth).
func openSynth(t testing.TB, style string) *dataset.Set {
	t.Helper()
	ds, err := dataset.Open(filepath.Join("..", "..", "testdata", "synth", style))
	if err != nil {
		t.Fatalf("the committed synthetic pairs: %v", err)
	}
	return ds
}

func newTestTrainer(t testing.TB, w *model.Weights, src Source, opt TrainerOptions) *Trainer {
	t.Helper()
	tr, err := NewTrainer(w, src, &opt)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { tr.Close() })
	return tr
}

func freshWeights(t testing.TB, seed uint64) *model.Weights {
	t.Helper()
	w, err := model.NewWeights(trainerConfig, seed)
	if err != nil {
		t.Fatal(err)
	}
	return w
}

// Training on the synthetic greenhouse pairs lowers the objective and the
// disparity error against the renderer's exact ground truth (package
// synth; EPE and δ < 1.25 computed by package depth).
func TestTrainerLowersLossAndError(t *testing.T) {
	ds := openSynth(t, "greenhouse")
	w := freshWeights(t, 3)
	src, err := NewDatasetSource(ds, trainerConfig, 1, 1, &data.DefaultAugment)
	if err != nil {
		t.Fatal(err)
	}
	before, err := evaluation.Score(context.Background(), w, ds, &evaluation.ScoreOptions{Workers: 3})
	if err != nil {
		t.Fatal(err)
	}
	if !before.HasDisparity || !before.HasDepth || len(before.Pairs) != 3 {
		t.Fatalf("evaluation before: %+v, want disparity and depth over 3 pairs", before)
	}
	var reports int
	tr := newTestTrainer(t, w, src, TrainerOptions{Steps: 90, Batch: 1, Seed: 1, Schedule: Schedule{Rate: 1e-3},
		Progress: func(p Progress) {
			reports++
			if p.StepsPerSec <= 0 || p.PairsPerSec != p.StepsPerSec {
				t.Errorf("step %d: rate %v steps/s, %v pairs/s", p.Step, p.StepsPerSec, p.PairsPerSec)
			}
		}})
	res, err := tr.Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	if res.Step != 90 || res.Skips != 0 || res.Interrupted || reports != 90 {
		t.Fatalf("result %+v after %d reports", res, reports)
	}
	after, err := evaluation.Score(context.Background(), tr.Weights(), ds, &evaluation.ScoreOptions{Workers: 3})
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("objective %.4f → %.4f; EPE %.2f → %.2f px; abs rel %.3f → %.3f; δ1 %.3f → %.3f",
		res.First.Total, res.Last.Total, before.Disparity.EPE, after.Disparity.EPE,
		before.Depth.AbsRel, after.Depth.AbsRel, before.Depth.Delta1, after.Depth.Delta1)
	if !(res.Last.Total < 0.8*res.First.Total) {
		t.Errorf("objective fell from %.4f only to %.4f", res.First.Total, res.Last.Total)
	}
	if !(after.Disparity.EPE < 0.8*before.Disparity.EPE) {
		t.Errorf("EPE fell from %.3f only to %.3f px", before.Disparity.EPE, after.Disparity.EPE)
	}
	// Abs rel is not asserted: in 90 steps far pixels (tiny disparities)
	// still have large relative depth errors; δ1 counts pixels.
	if !(after.Depth.Delta1 > before.Depth.Delta1+0.05) {
		t.Errorf("δ < 1.25 rose from %.3f only to %.3f", before.Depth.Delta1, after.Depth.Delta1)
	}
}

// A run cancelled part-way writes a checkpoint; a new Trainer resumed from
// it ends with weights and solver state bit for bit those of the
// uninterrupted run. The interruption falls inside an epoch (3 batches per
// epoch), with augmentation on, so the data position and the random state
// are both exercised. It runs with the default GOMAXPROCS: the kernels give
// the same bits on any number of threads (TestRunsSameOnAnyThreadCount).
func TestResumeEqualsUninterrupted(t *testing.T) {
	ds := openSynth(t, "greenhouse")
	t.Logf("GOMAXPROCS=%d", runtime.GOMAXPROCS(0))
	const steps, stop = 7, 4
	dir := t.TempDir()
	opts := func(path string) TrainerOptions {
		return TrainerOptions{Steps: steps, Batch: 1, Seed: 5, Schedule: Schedule{Warmup: 2}, CheckpointPath: path, CheckpointEvery: 3}
	}
	source := func() Source {
		src, err := NewDatasetSource(ds, trainerConfig, 1, 5, &data.DefaultAugment)
		if err != nil {
			t.Fatal(err)
		}
		return src
	}

	full := newTestTrainer(t, freshWeights(t, 9), source(), opts(filepath.Join(dir, "full.ckpt")))
	if _, err := full.Run(context.Background()); err != nil {
		t.Fatal(err)
	}

	path := filepath.Join(dir, "part.ckpt")
	ctx, cancel := context.WithCancel(context.Background())
	o := opts(path)
	o.Progress = func(p Progress) {
		if p.Step == stop {
			cancel()
		}
	}
	part := newTestTrainer(t, freshWeights(t, 9), source(), o)
	res, err := part.Run(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if !res.Interrupted || res.Step != stop || res.Checkpoint != path {
		t.Fatalf("cancelled run: %+v, want interrupted at step %d with checkpoint %s", res, stop, path)
	}
	c, err := LoadCheckpoint(path)
	if err != nil {
		t.Fatal(err)
	}
	if c.Step != stop || c.Solver.Step != stop {
		t.Fatalf("checkpoint at step %d (%d updates), want %d", c.Step, c.Solver.Step, stop)
	}

	// A fresh process: other initial weights, which Resume replaces.
	resumed := newTestTrainer(t, freshWeights(t, 77), source(), opts(path))
	if err := resumed.Resume(c); err != nil {
		t.Fatal(err)
	}
	rres, err := resumed.Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	if rres.Step != steps {
		t.Fatalf("resumed run ended at step %d", rres.Step)
	}
	a, b := full.Checkpoint(), resumed.Checkpoint()
	for name, v := range a.Weights.Params {
		for i := range v {
			if math.Float32bits(v[i]) != math.Float32bits(b.Weights.Params[name][i]) {
				t.Fatalf("parameter %s[%d]: uninterrupted %v, resumed %v", name, i, v[i], b.Weights.Params[name][i])
			}
		}
	}
	for name, m := range a.Solver.M {
		for i := range m {
			if math.Float32bits(m[i]) != math.Float32bits(b.Solver.M[name][i]) || math.Float32bits(a.Solver.V[name][i]) != math.Float32bits(b.Solver.V[name][i]) {
				t.Fatalf("moments of %s differ at %d", name, i)
			}
		}
	}
	if a.Solver.Step != b.Solver.Step || a.Step != b.Step {
		t.Errorf("steps: uninterrupted %d/%d, resumed %d/%d", a.Step, a.Solver.Step, b.Step, b.Solver.Step)
	}
	if full.first != resumed.first {
		t.Errorf("first terms: uninterrupted %+v, resumed %+v", full.first, resumed.first)
	}
	// The two final checkpoint files are the same bytes.
	fa, _ := os.ReadFile(filepath.Join(dir, "full.ckpt"))
	fb, _ := os.ReadFile(path)
	if string(fa) != string(fb) {
		t.Errorf("final checkpoints differ (%d and %d bytes)", len(fa), len(fb))
	}
}

// Two uninterrupted 5-step runs on 2 threads, and one on a single thread,
// end with the same weights and Adam moments bit for bit. Before the
// convolution weight gradient grouped its partial sums by the problem's
// size alone, two 2-thread runs differed in the last bit of thousands of
// values after 5 steps.
func TestRunsSameOnAnyThreadCount(t *testing.T) {
	ds := openSynth(t, "greenhouse")
	run := func(procs int) *Checkpoint {
		defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(procs))
		src, err := NewDatasetSource(ds, trainerConfig, 1, 5, &data.DefaultAugment)
		if err != nil {
			t.Fatal(err)
		}
		tr := newTestTrainer(t, freshWeights(t, 9), src, TrainerOptions{Steps: 5, Batch: 1, Seed: 5, Schedule: Schedule{Warmup: 2}})
		if _, err := tr.Run(context.Background()); err != nil {
			t.Fatal(err)
		}
		return tr.Checkpoint()
	}
	want := run(2)
	for i, procs := range []int{2, 1} {
		got := run(procs)
		var diffs int
		first := ""
		for name, v := range want.Weights.Params {
			g := got.Weights.Params[name]
			m, gm := want.Solver.M[name], got.Solver.M[name]
			vv, gv := want.Solver.V[name], got.Solver.V[name]
			if len(g) != len(v) || len(gm) != len(m) || len(gv) != len(vv) {
				t.Fatalf("parameter %s: shapes differ between runs", name)
			}
			for j := range v {
				if math.Float32bits(v[j]) != math.Float32bits(g[j]) || math.Float32bits(m[j]) != math.Float32bits(gm[j]) || math.Float32bits(vv[j]) != math.Float32bits(gv[j]) {
					if diffs == 0 {
						first = fmt.Sprintf("%s[%d]: weight bits %08x against %08x", name, j, math.Float32bits(g[j]), math.Float32bits(v[j]))
					}
					diffs++
				}
			}
		}
		if diffs > 0 {
			t.Errorf("run %d (GOMAXPROCS=%d) differs from the first 2-thread run in %d values (weights or moments), first %s", i+2, procs, diffs, first)
		}
	}
}

// poisoned wraps a Source and fills one batch with NaN pixels.
// tampered serves the batches of its Source, but global batch at goes
// through edit first (a NaN pixel, a read error).
type tampered struct {
	Source
	at   int
	edit func(*data.Batch, error) (*data.Batch, error)
}

type tamperedBatches struct {
	Batches
	k int
	t tampered
}

func (p tampered) Epoch(ctx context.Context, e int) Batches {
	return &tamperedBatches{Batches: p.Source.Epoch(ctx, e), k: e * p.BatchesPerEpoch(), t: p}
}

func (p *tamperedBatches) Next() (*data.Batch, error) {
	b, err := p.Batches.Next()
	if p.k == p.t.at {
		b, err = p.t.edit(b, err)
	}
	p.k++
	return b, err
}

// poisoned puts a NaN into the right image of global batch at.
func poisoned(src Source, at int) Source {
	return tampered{src, at, func(b *data.Batch, err error) (*data.Batch, error) {
		if err == nil {
			b.Right.Pix[17] = float32(math.NaN())
		}
		return b, err
	}}
}

// failing fails at global batch at, as a corrupt file would.
func failing(src Source, at int) Source {
	return tampered{src, at, func(*data.Batch, error) (*data.Batch, error) {
		return nil, errors.New("data: left/x.png: png: invalid format")
	}}
}

// A batch with a NaN pixel is skipped and reported; the checkpoint written
// after it holds the same weights and moments as the one before.
func TestPoisonedBatchSkipped(t *testing.T) {
	ds := openSynth(t, "greenhouse")
	src, err := NewDatasetSource(ds, trainerConfig, 1, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "run.ckpt")
	var ckpts []*Checkpoint
	var skipped []Progress
	tr := newTestTrainer(t, freshWeights(t, 4), poisoned(src, 2), TrainerOptions{Steps: 4, Batch: 1, Seed: 2,
		CheckpointPath: path, CheckpointEvery: 1,
		Progress: func(p Progress) {
			if p.Skipped {
				skipped = append(skipped, p)
			}
			if p.Checkpoint != "" {
				c, err := LoadCheckpoint(p.Checkpoint)
				if err != nil {
					t.Fatal(err)
				}
				ckpts = append(ckpts, c)
			}
		}})
	res, err := tr.Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	if len(skipped) != 1 || skipped[0].Step != 3 || !strings.Contains(skipped[0].SkipReason, "NaN") {
		t.Fatalf("skipped steps %+v, want step 3 reported with a NaN reason", skipped)
	}
	t.Logf("skip reason: %s", skipped[0].SkipReason)
	if res.Skips != 1 || res.Step != 4 {
		t.Errorf("result %+v, want 4 steps with 1 skip", res)
	}
	if len(ckpts) != 3 { // after steps 1, 2 and 3; the end writes the last
		t.Fatalf("%d checkpoints during the run, want 3", len(ckpts))
	}
	before, after := ckpts[1], ckpts[2]
	if after.Solver.Step != before.Solver.Step || after.Skips != 1 || after.Step != 3 {
		t.Errorf("after the poisoned step: %d updates, %d skips, step %d", after.Solver.Step, after.Skips, after.Step)
	}
	for name, v := range before.Weights.Params {
		for i := range v {
			if math.Float32bits(v[i]) != math.Float32bits(after.Weights.Params[name][i]) ||
				math.Float32bits(before.Solver.M[name][i]) != math.Float32bits(after.Solver.M[name][i]) ||
				math.Float32bits(before.Solver.V[name][i]) != math.Float32bits(after.Solver.V[name][i]) {
				t.Fatalf("%s[%d] changed across the poisoned step", name, i)
			}
		}
	}
	// The step after the poisoned one trains again.
	final, err := LoadCheckpoint(path)
	if err != nil {
		t.Fatal(err)
	}
	if final.Solver.Step != 3 || final.Step != 4 {
		t.Errorf("final checkpoint: %d updates at step %d, want 3 at 4", final.Solver.Step, final.Step)
	}
}

// A network whose heads output a constant map (zero head weights) with a
// negligible learning rate is reported as collapsed after
// CollapseOptions.Steps steps.
func TestCollapseReported(t *testing.T) {
	ds := openSynth(t, "greenhouse")
	src, err := NewDatasetSource(ds, trainerConfig, 1, 1, nil)
	if err != nil {
		t.Fatal(err)
	}
	w := freshWeights(t, 1)
	for name, v := range w.Params {
		if strings.HasPrefix(name, "head") && strings.HasSuffix(name, ".weight") {
			clear(v)
		}
	}
	var at []int
	tr := newTestTrainer(t, w, src, TrainerOptions{Steps: 6, Batch: 1, Schedule: Schedule{Rate: 1e-12},
		Collapse: CollapseOptions{Steps: 4, After: CollapseFromStart},
		Progress: func(p Progress) {
			if p.Spread > 1e-3 {
				t.Errorf("step %d: spread %v of a constant map", p.Step, p.Spread)
			}
			if p.Collapsed {
				at = append(at, p.Step)
			}
		}})
	res, err := tr.Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	if len(at) != 1 || at[0] != 4 || res.Collapses != 1 {
		t.Errorf("collapse reported at steps %v (%d episodes), want once at step 4", at, res.Collapses)
	}
	// A vanishing map (mean far below 0.25 px) is flagged too, though its
	// coefficient of variation is large.
	w2 := freshWeights(t, 1)
	for name, v := range w2.Params {
		if strings.HasPrefix(name, "head") && strings.HasSuffix(name, ".bias") {
			for i := range v {
				v[i] = -30
			}
		}
	}
	var at2 []int
	tr2 := newTestTrainer(t, w2, src, TrainerOptions{Steps: 6, Batch: 1, Schedule: Schedule{Rate: 1e-12},
		Collapse: CollapseOptions{Steps: 3, After: 1},
		Progress: func(p Progress) {
			if p.Collapsed {
				at2 = append(at2, p.Step)
			}
			if p.MeanDisparity > 1e-6 {
				t.Errorf("step %d: mean disparity %v px", p.Step, p.MeanDisparity)
			}
		}})
	if _, err := tr2.Run(context.Background()); err != nil {
		t.Fatal(err)
	}
	if len(at2) != 1 || at2[0] != 4 {
		t.Errorf("vanishing map reported at steps %v, want once at step 4 (steps 2-4 after a grace of 1)", at2)
	}
	// A trained-looking map is not flagged.
	if s := spread([]float32{0.1, 0.2, 0.3, 0.4}, 1); !(s > 0.4 && s < 0.5) {
		t.Errorf("spread of 0.1…0.4 is %v, want √0.0125/0.25 ≈ 0.447", s)
	}
}

// The default schedule: linear warm-up, then ×0.5 at 60% and 80% of the
// steps (our own defaults, see Schedule).
// PrepareHeads changes exactly the head tensors, and the heads then start
// at σ(−3)·d_max with little spread.
func TestPrepareHeads(t *testing.T) {
	w := freshWeights(t, 2)
	orig := map[string][]float32{}
	for k, v := range w.Params {
		orig[k] = append([]float32(nil), v...)
	}
	if n := PrepareHeads(w); n != 2*model.Scales {
		t.Errorf("%d head tensors changed, want %d", n, 2*model.Scales)
	}
	for k, v := range w.Params {
		head := strings.HasPrefix(k, "head")
		for i := range v {
			switch {
			case !head && v[i] != orig[k][i]:
				t.Fatalf("%s changed", k)
			case head && strings.HasSuffix(k, ".bias") && v[i] != -3:
				t.Fatalf("%s[%d] = %v", k, i, v[i])
			case head && strings.HasSuffix(k, ".weight") && v[i] != orig[k][i]*0.1:
				t.Fatalf("%s[%d] = %v, want %v", k, i, v[i], orig[k][i]*0.1)
			}
		}
	}
	ds := openSynth(t, "greenhouse")
	ev, err := evaluation.Score(context.Background(), w, ds, &evaluation.ScoreOptions{Workers: 3})
	if err != nil {
		t.Fatal(err)
	}
	net, err := model.NewNet(w, 1)
	if err != nil {
		t.Fatal(err)
	}
	src, _ := NewDatasetSource(ds, trainerConfig, 1, 1, nil)
	it := src.Epoch(context.Background(), 0)
	b, err := it.Next()
	it.Close()
	if err != nil {
		t.Fatal(err)
	}
	out, err := net.Forward(b.Left)
	if err != nil {
		t.Fatal(err)
	}
	want := 0.3 / (1 + math.Exp(3)) // d_max·σ(−3), d_max = model.DefaultDMax
	m := mean(out[0].Pix)
	// The head inputs still vary, and σ is convex below 0, so the mean
	// lies below σ(−3)·d_max (by about 22% here).
	if !(m > 0.6*want && m < 1.05*want) {
		t.Errorf("mean start disparity %v, want about %v", m, want)
	}
	t.Logf("start: mean d %.4f of the width, EPE %.2f px", m, ev.Disparity.EPE)
}

func TestScheduleDefaults(t *testing.T) {
	var s Schedule
	const steps = 1000 // warm-up 20 steps
	cases := []struct {
		step int
		want float64
	}{
		{0, 3e-4 / 21}, {9, 3e-4 * 10 / 21}, {19, 3e-4 * 20 / 21}, {20, 3e-4}, {599, 3e-4},
		{600, 3e-4}, {999, 3e-4}, // no decay by default
	}
	for _, c := range cases {
		if got := s.At(c.step, steps); math.Abs(got-c.want) > 1e-15 {
			t.Errorf("rate at step %d: %v, want %v", c.step, got, c.want)
		}
	}
	if got := (Schedule{Warmup: -1, Milestones: []float64{}}).At(0, 10); got != 3e-4 {
		t.Errorf("no warm-up, no decay: %v", got)
	}
	// Milestones as given, in any order, each multiplying by Decay (0.5 by
	// default) from its step on.
	ms := Schedule{Milestones: []float64{0.8, 0.6}}
	for _, c := range []struct {
		step int
		want float64
	}{{599, 3e-4}, {600, 1.5e-4}, {799, 1.5e-4}, {800, 0.75e-4}, {999, 0.75e-4}} {
		if got := ms.At(c.step, steps); math.Abs(got-c.want) > 1e-15 {
			t.Errorf("milestones 0.6, 0.8: rate at step %d: %v, want %v", c.step, got, c.want)
		}
	}
	for _, bad := range []Schedule{{Rate: -1}, {Milestones: []float64{1.5}}, {Decay: math.NaN()}, {Rate: math.Inf(1)}} {
		if _, err := bad.withDefaults(10); err == nil || !strings.HasPrefix(err.Error(), "train: ") {
			t.Errorf("schedule %+v: error %v", bad, err)
		}
	}
}

// A data error ends the run with an error that names the bad file and a
// checkpoint of the completed steps, which resumes.
func TestDataErrorWritesCheckpoint(t *testing.T) {
	ds := openSynth(t, "greenhouse")
	src, err := NewDatasetSource(ds, trainerConfig, 1, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "run.ckpt")
	tr := newTestTrainer(t, freshWeights(t, 4), failing(src, 4), TrainerOptions{Steps: 6, Batch: 1, Seed: 2, CheckpointPath: path})
	res, err := tr.Run(context.Background())
	if err == nil || !strings.HasPrefix(err.Error(), "train: ") || !strings.Contains(err.Error(), "x.png") || !strings.Contains(err.Error(), path) {
		t.Fatalf("error %v, want one naming the file and the checkpoint", err)
	}
	t.Log(err)
	if res.Step != 4 || res.Checkpoint != path {
		t.Errorf("result %+v, want step 4 with the checkpoint", res)
	}
	c, err := LoadCheckpoint(path)
	if err != nil {
		t.Fatal(err)
	}
	if c.Step != 4 || c.Solver.Step != 4 {
		t.Errorf("checkpoint at step %d after %d updates, want 4 and 4", c.Step, c.Solver.Step)
	}
	for name, v := range tr.Weights().Params {
		for i := range v {
			if math.Float32bits(v[i]) != math.Float32bits(c.Weights.Params[name][i]) {
				t.Fatalf("%s[%d]: checkpoint %v, trainer %v", name, i, c.Weights.Params[name][i], v[i])
			}
		}
	}
}

// Scoring held-out pairs (TrainerOptions.Validation) reports their terms
// at every ValidationEvery steps and after the last step, and changes
// nothing of the training: the weights end the same bits as a run
// without it. The held-out terms are those of Session.Forward on the same
// resized pairs, recomputed here with a separate session.
func TestValidationScores(t *testing.T) {
	ds := openSynth(t, "greenhouse")
	const steps = 5
	src := func() Source {
		s, err := NewDatasetSource(ds, trainerConfig, 1, 5, nil)
		if err != nil {
			t.Fatal(err)
		}
		return s
	}
	plain := newTestTrainer(t, freshWeights(t, 9), src(), TrainerOptions{Steps: steps, Batch: 1, Seed: 5})
	if _, err := plain.Run(context.Background()); err != nil {
		t.Fatal(err)
	}
	var at []int
	var last loss.Terms
	opt := TrainerOptions{Steps: steps, Batch: 1, Seed: 5, Validation: ds, ValidationEvery: 2, ValidationBatches: 2,
		Progress: func(p Progress) {
			if p.Validated {
				at, last = append(at, p.Step), p.Validation
			}
		}}
	scored := newTestTrainer(t, freshWeights(t, 9), src(), opt)
	if _, err := scored.Run(context.Background()); err != nil {
		t.Fatal(err)
	}
	if fmt.Sprint(at) != "[2 4 5]" {
		t.Errorf("validated at steps %v, want [2 4 5]", at)
	}
	a, b := plain.Weights(), scored.Weights()
	for name, v := range a.Params {
		for i := range v {
			if math.Float32bits(v[i]) != math.Float32bits(b.Params[name][i]) {
				t.Fatalf("parameter %s[%d]: %v without validation, %v with", name, i, v[i], b.Params[name][i])
			}
		}
	}
	// The same two batches, scored by a fresh session holding the final weights.
	sess, err := NewSession(b, 1, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	defer sess.Close()
	it := src().Epoch(context.Background(), 0)
	defer it.Close()
	var want float64
	for range 2 {
		bt, err := it.Next()
		if err != nil {
			t.Fatal(err)
		}
		tm, err := sess.Forward(bt.Left, bt.Right)
		sess.ClearGradients()
		if err != nil {
			t.Fatal(err)
		}
		want += tm.Total / 2
	}
	if math.Abs(last.Total-want) > 1e-9*want || !(want > 0) {
		t.Errorf("held-out total %v, recomputed %v", last.Total, want)
	}
}
