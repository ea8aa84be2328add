package train

import (
	"context"
	"errors"
	"fmt"
	"io"
	"path/filepath"
	"strings"
	"time"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/data"
	"github.com/parallaxdepth/parallax/safetensors"
)

// Files names the files a training run writes: the trained weights, the
// checkpoint, the CSV log of every step (StepLog) and the loss-curve PNG.
type Files struct {
	Weights, Checkpoint, Log, Plot string
}

// WithDefaults returns f with an empty Checkpoint set to Weights with
// ".ckpt" added, and an empty Log and Plot set to Weights with its
// extension replaced by ".csv" and ".png".
func (f Files) WithDefaults() Files {
	base := strings.TrimSuffix(f.Weights, filepath.Ext(f.Weights))
	def := func(s *string, v string) {
		if *s == "" {
			*s = v
		}
	}
	def(&f.Checkpoint, f.Weights+".ckpt")
	def(&f.Log, base+".csv")
	def(&f.Plot, base+".png")
	return f
}

func (f Files) all() []string { return []string{f.Weights, f.Checkpoint, f.Log, f.Plot} }

// Prepare checks, before any training, that every file of f can be
// written (ProbeWritable) and, for a fresh run (resume false), that the
// checkpoint would not replace an earlier run's (CheckNewCheckpoint); then
// it removes the temporary files that an interrupted write of one of them
// left (RemoveStaleTemps) and returns those.
func (f Files) Prepare(resume bool) ([]string, error) {
	var fresh error
	if !resume {
		fresh = CheckNewCheckpoint(f.Checkpoint)
	}
	if err := errors.Join(fresh, ProbeWritable(f.all()...)); err != nil {
		return nil, err
	}
	return RemoveStaleTemps(f.all()...)
}

// CheckSpace checks that the folders of f have room for a checkpoint of w
// and for w itself (CheckFreeSpace).
func (f Files) CheckSpace(w *model.Weights) error {
	ck := CheckpointBytes(w)
	need := map[string]int64{filepath.Dir(f.Checkpoint): ck}
	need[filepath.Dir(f.Weights)] += ck / 3 // the parameters alone, without Adam's two moments
	return CheckFreeSpace(need)
}

// Job is a whole training run on files: Open checks the files and takes
// the starting weights, Run trains them on a data set, writing the
// checkpoint and the log as it goes, and saves the trained weights with
// their provenance, the log and its plot. The finetune command is a Job
// with flags.
type Job struct {
	// Start is what the run starts from; its Checkpoint is set to
	// Files.Checkpoint.
	Start Start
	// Files are the outputs; empty ones get their defaults
	// (Files.WithDefaults) in Open.
	Files Files
	// Data is the training set.
	Data *dataset.Set
	// Augment is the augmentation of the training pairs, nil for none
	// (data.DefaultAugment is the project's choice).
	Augment *data.Augment
	// Options configure the Trainer; CheckpointPath is set to
	// Files.Checkpoint, and Progress is called after each step's log row
	// is added. The log and the loss curve are saved at every checkpoint.
	Options TrainerOptions
	// CheckpointMilestones, when resuming, replaces
	// Options.Schedule.Milestones by the checkpoint's.
	CheckpointMilestones bool
	// Info goes into the trained weights' provenance (RunInfo.Stamp); Run
	// fills in Start, Rate, Milestones and Interrupted.
	Info RunInfo
	// DType is the storage type of the trained weights ("" is F32).
	DType safetensors.DType
	// Note, if not nil, receives what the user should know that is no
	// error: stale temporary files removed, a changed schedule on resume,
	// a log that could not be saved at a checkpoint.
	Note func(string)

	// Set by Open: the starting weights, the checkpoint resumed (or nil),
	// a phrase naming the origin (Start.Open), and the log, holding the
	// rows of the checkpoint's steps when resuming.
	Weights    *model.Weights
	Checkpoint *Checkpoint
	Origin     string
	Log        StepLog
}

// JobResult is what Job.Run returns.
type JobResult struct {
	RunResult
	// Weights are the trained weights, as saved to Files.Weights.
	Weights *model.Weights
	// Steps are the steps trained in this run (fewer than RunResult.Step
	// when resuming), in Took.
	Steps int
	Took  time.Duration
}

func (j *Job) note(s string) {
	if j.Note != nil {
		j.Note(s)
	}
}

// Open prepares the run: it gives Files their defaults and checks them
// (Files.Prepare), checks that Data makes a batch, opens Start, applies
// the checkpoint's milestones if asked, notes a schedule that differs from
// the checkpoint's (ScheduleChange), checks the schedule, the free space
// (Files.CheckSpace) and loads the log of a resumed run.
func (j *Job) Open() error {
	j.Files = j.Files.WithDefaults()
	j.Start.Checkpoint, j.Options.CheckpointPath = j.Files.Checkpoint, j.Files.Checkpoint
	removed, err := j.Files.Prepare(j.Start.Resume)
	if err != nil {
		return err
	}
	if len(removed) > 0 {
		j.note(fmt.Sprintf("removed %d temporary file(s) an interrupted write had left: %s", len(removed), strings.Join(removed, ", ")))
	}
	if j.Data == nil || len(j.Data.Pairs) < max(j.Options.Batch, 1) {
		n := 0
		if j.Data != nil {
			n = len(j.Data.Pairs)
		}
		return fmt.Errorf("train: %d training pairs make no batch of %d (use a smaller batch or hold out fewer pairs)", n, j.Options.Batch)
	}
	if j.Weights, j.Checkpoint, j.Origin, err = j.Start.Open(); err != nil {
		return err
	}
	if ck := j.Checkpoint; ck != nil {
		if j.CheckpointMilestones {
			j.Options.Schedule.Milestones = ck.Schedule.Milestones
		}
		if n := ScheduleChange(ck, j.Options.Steps, j.Options.Schedule); n != "" {
			j.note(n)
		}
	}
	// A bad rate or milestone is refused now, not after an evaluation.
	if _, err := j.Options.Schedule.withDefaults(j.Options.Steps); err != nil {
		return err
	}
	if err := j.Files.CheckSpace(j.Weights); err != nil {
		return err
	}
	j.Log = StepLog{Path: j.Files.Log, Plot: j.Files.Plot}
	if j.Checkpoint != nil {
		return j.Log.Load(j.Checkpoint.Step)
	}
	return nil
}

// Run trains the weights that Open took. On cancellation of ctx it saves
// the checkpoint, the log, the plot and the weights so far (their
// provenance says where the run stopped) and returns the result with
// Interrupted set and a nil error; on an error it saves the log so far.
func (j *Job) Run(ctx context.Context) (*JobResult, error) {
	if j.Weights == nil {
		return nil, errors.New("train: Job.Run before Open")
	}
	src, err := NewDatasetSource(j.Data, j.Weights.Config, j.Options.Batch, j.Options.Seed, j.Augment)
	if err != nil {
		return nil, err
	}
	opt, progress := j.Options, j.Options.Progress
	opt.Progress = func(p Progress) {
		j.Log.Add(p)
		if p.Checkpoint != "" {
			if err := j.Log.Save(); err != nil {
				j.note(err.Error())
			}
		}
		if progress != nil {
			progress(p)
		}
	}
	tr, err := NewTrainer(j.Weights, src, &opt)
	if err != nil {
		return nil, err
	}
	defer tr.Close()
	if j.Checkpoint != nil {
		if err := tr.Resume(j.Checkpoint); err != nil {
			return nil, err
		}
	}
	began, startStep := time.Now(), tr.Step()
	res, err := tr.Run(ctx)
	if err != nil {
		return nil, errors.Join(err, j.Log.Save())
	}
	out := &JobResult{RunResult: *res, Weights: tr.Weights(), Steps: res.Step - startStep, Took: time.Since(began)}
	if err := j.Log.Save(); err != nil { // and the plot
		return nil, err
	}
	info := j.Info
	info.Start, info.Rate, info.Milestones = j.Origin, opt.Schedule.Rate, opt.Schedule.Milestones
	if res.Interrupted {
		info.Interrupted = fmt.Sprintf("at step %d of %d", res.Step, opt.Steps)
	}
	info.Stamp(out.Weights)
	if err := out.Weights.Save(j.Files.Weights, j.DType); err != nil {
		return nil, err
	}
	return out, nil
}

// WriteSummary writes what the run r of j did to w: the steps trained,
// their speed and the skips, the files written, the mean loss terms of
// the first and last ten steps, and a warning if the disparity collapsed.
func (j *Job) WriteSummary(w io.Writer, r *JobResult) error {
	var b strings.Builder
	fmt.Fprintf(&b, "trained to step %d (%d steps of %d pairs in this run, %s, %.2f steps/s), %d skipped\nweights %s, checkpoint %s, log %s, curve %s\n\n",
		r.Step, r.Steps, j.Options.Batch, r.Took.Round(time.Second), float64(r.Steps)/r.Took.Seconds(), r.Skips, j.Files.Weights, r.Checkpoint, j.Files.Log, j.Files.Plot)
	j.Log.summary(&b, 10)
	if r.Collapses > 0 {
		fmt.Fprintf(&b, "\nwarning: the disparity collapsed to a near-constant map %d time(s); the weights may be useless\n", r.Collapses)
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// Note returns what a user watching the run should be told about step p:
// that it was skipped, or that the disparity has collapsed; "" otherwise.
func (p Progress) Note() string {
	switch {
	case p.Skipped:
		return fmt.Sprintf("step %d skipped: %s", p.Step, p.SkipReason)
	case p.Collapsed:
		return fmt.Sprintf("step %d: the disparity map is nearly constant or vanishing (spread %.4f, mean %.3f px, several steps in a row): training has collapsed; try a lower learning rate", p.Step, p.Spread, p.MeanDisparity)
	}
	return ""
}
