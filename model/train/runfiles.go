package train

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/internal/atomicfile"
	"github.com/parallaxdepth/parallax/model"
)

// CheckNewCheckpoint returns an error if a fresh run would replace the
// checkpoint at path, which an earlier run left: its state would be lost
// at the first save. Continue that run with Trainer.Resume instead, or
// choose another path.
func CheckNewCheckpoint(path string) error {
	if _, err := os.Stat(path); err == nil {
		return fmt.Errorf("train: checkpoint %s exists from an earlier run; continue it (resume), or remove it or choose another path to start over", path)
	}
	return nil
}

// ScheduleChange returns a note if resuming ck with another number of
// steps or base learning rate: the run continues, but its schedule changes
// from the checkpoint's step on, so the result differs from the
// uninterrupted run. It returns "" when nothing changes.
func ScheduleChange(ck *Checkpoint, steps int, s Schedule) string {
	was, now := FormatMilestones(ck.Schedule.Milestones), FormatMilestones(s.Milestones)
	if ck.Steps == steps && ck.Schedule.Rate == s.Rate && was == now {
		return ""
	}
	return fmt.Sprintf("the checkpoint's run had %d steps at rate %v with milestones %s, this one %d at rate %v with milestones %s: the learning-rate schedule changes from step %d on, so the result differs from the uninterrupted run",
		ck.Steps, ck.Schedule.Rate, was, steps, s.Rate, now, ck.Step)
}

// ParseMilestones reads milestones written as comma-separated fractions of
// the steps ("0.6,0.8"); "" and "none" mean no decay.
func ParseMilestones(s string) ([]float64, error) {
	if s == "" || s == "none" {
		return nil, nil
	}
	var ms []float64
	for _, f := range strings.Split(s, ",") {
		v, err := strconv.ParseFloat(strings.TrimSpace(f), 64)
		if err != nil {
			return nil, fmt.Errorf("train: milestones %q: %q is not a number", s, f)
		}
		ms = append(ms, v)
	}
	return ms, nil
}

// FormatMilestones writes milestones as ParseMilestones reads them
// ("none" for no decay).
func FormatMilestones(ms []float64) string {
	if len(ms) == 0 {
		return "none"
	}
	parts := make([]string, len(ms))
	for i, m := range ms {
		parts[i] = strconv.FormatFloat(m, 'g', -1, 64)
	}
	return strings.Join(parts, ",")
}

// ProbeWritable checks, before any training, that each output path can be
// written the way the run writes it: its folder exists, a temporary file
// can be created there (and is removed at once), and the path is not a
// folder. The error names the path.
func ProbeWritable(paths ...string) error {
	for _, p := range paths {
		dir := filepath.Dir(p)
		if st, err := os.Stat(dir); err != nil || !st.IsDir() {
			return fmt.Errorf("train: output %s: the folder %s does not exist", p, dir)
		}
		if st, err := os.Stat(p); err == nil && st.IsDir() {
			return fmt.Errorf("train: output %s is a folder", p)
		}
		f, err := os.CreateTemp(dir, "."+filepath.Base(p)+".tmp*")
		if err != nil {
			return fmt.Errorf("train: output %s cannot be written: %w", p, err)
		}
		f.Close()
		os.Remove(f.Name())
	}
	return nil
}

// RemoveStaleTemps removes the temporary files that an interrupted atomic
// write of one of paths left beside it (a kill during a checkpoint write):
// only files named as this module's atomic writer names its temporaries
// for exactly those paths. It returns the files removed.
func RemoveStaleTemps(paths ...string) ([]string, error) {
	var removed []string
	for _, p := range paths {
		stale, err := atomicfile.Stale(p)
		if err != nil {
			return removed, fmt.Errorf("train: %w", err)
		}
		for _, s := range stale {
			if err := os.Remove(s); err != nil {
				return removed, fmt.Errorf("train: removing a stale temporary file: %w", err)
			}
			removed = append(removed, s)
		}
	}
	return removed, nil
}

// CheckpointBytes returns about the size of a checkpoint of w: the
// parameters and Adam's two moments in float32, plus the header.
func CheckpointBytes(w *model.Weights) int64 {
	n := int64(0)
	for _, p := range w.Params {
		n += int64(len(p))
	}
	return 3*4*n + 1<<20
}

// ErrNoSpace is wrapped by CheckFreeSpace's error.
var ErrNoSpace = errors.New("not enough free space")

// CheckFreeSpace returns an error wrapping ErrNoSpace if a folder of need
// (folder → bytes the run will write there at once) has less free space
// than needed. An atomic replace writes the new file beside the old one, so
// the need is the new files' full size. Where free space cannot be read,
// nothing is checked.
func CheckFreeSpace(need map[string]int64) error {
	for dir, n := range need {
		free, ok := freeBytes(dir)
		if ok && free < n {
			return fmt.Errorf("train: %w in %s: %s free, %s needed (a checkpoint or weights file is written in full beside the old one before it replaces it)",
				ErrNoSpace, dir, mb(free), mb(n))
		}
	}
	return nil
}

// writeOutput writes data to path atomically (internal/atomicfile) and, if
// the file system is full, says how much space there is and how much the
// file needs, wrapping ErrNoSpace as well as the file system's error.
func writeOutput(path, prefix string, data []byte) error {
	err := writeBytes(path, prefix, data)
	if err == nil || !isNoSpace(err) {
		return err
	}
	dir := filepath.Dir(path)
	free, ok := freeBytes(dir) // after the temporary file was removed
	have := "free space unknown"
	if ok {
		have = mb(free) + " free"
	}
	return fmt.Errorf("%w: %w in %s: %s, %s needed for %s (written in full beside the old file before it replaces it)",
		err, ErrNoSpace, dir, have, mb(int64(len(data))), filepath.Base(path))
}

// writeBytes is atomicfile.WriteBytes; tests replace it to fill the disk.
var writeBytes = atomicfile.WriteBytes

func mb(n int64) string { return fmt.Sprintf("%.1f MB", float64(n)/(1<<20)) }

// RunInfo describes a training run for the weights' provenance.
type RunInfo struct {
	// Data is the data set's folder, Start what the run started from,
	// Command the command line.
	Data, Start, Command string
	// Rate is the base learning rate and Milestones its halving points.
	Rate       float64
	Milestones []float64
	// Interrupted, if not empty, says where the run stopped early.
	Interrupted string
}

// Stamp records r in w's provenance (train.data, train.start, train.date in
// UTC, train.lr, train.command and, if set, train.interrupted) and drops
// the status entry of the weights it started from, which no longer
// applies.
func (r RunInfo) Stamp(w *model.Weights) {
	if w.Provenance == nil {
		w.Provenance = map[string]string{}
	}
	w.Provenance["train.data"] = r.Data
	w.Provenance["train.start"] = r.Start
	w.Provenance["train.date"] = time.Now().UTC().Format(time.RFC3339)
	w.Provenance["train.lr"] = fmt.Sprint(r.Rate)
	w.Provenance["train.milestones"] = FormatMilestones(r.Milestones)
	w.Provenance["train.command"] = strings.TrimSpace(r.Command)
	if r.Interrupted != "" {
		w.Provenance["train.interrupted"] = r.Interrupted
	}
	delete(w.Provenance, model.ProvenanceStatus)
}

// Start says what a run starts from; the zero value is the embedded
// default weights.
type Start struct {
	// Resume continues the checkpoint at Checkpoint.
	Resume     bool
	Checkpoint string
	// Weights, if not empty, is a weights file or a checkpoint whose
	// weights are taken (LoadWeights).
	Weights string
	// Scratch starts from a fresh initialisation seeded by Seed, with
	// d_max from Rig if not nil (model.DMaxFromRig), heads prepared
	// (PrepareHeads).
	Scratch bool
	Seed    uint64
	// Stereo makes the fresh network the stereo one (model.StereoArchName).
	Stereo bool
	Rig    *depth.Rig
}

// Open returns the weights s starts from, the checkpoint when resuming
// (else nil), and a phrase naming the origin for logs and provenance.
func (s Start) Open() (*model.Weights, *Checkpoint, string, error) {
	switch {
	case s.Resume:
		ck, err := LoadCheckpoint(s.Checkpoint)
		if err != nil {
			return nil, nil, "", err
		}
		return ck.Weights, ck, fmt.Sprintf("checkpoint %s at step %d", s.Checkpoint, ck.Step), nil
	case s.Stereo && !s.Scratch:
		return nil, nil, "", errors.New("train: the stereo kind is chosen for a fresh start only (otherwise it follows the starting weights)")
	case s.Weights != "" && s.Scratch:
		return nil, nil, "", errors.New("train: start from a weights file or from scratch, not both")
	case s.Weights != "":
		w, _, err := LoadWeights(s.Weights)
		return w, nil, "weights " + s.Weights, err
	case s.Scratch:
		cfg := model.Config{}
		if s.Stereo {
			cfg.Arch = model.StereoArchName
		}
		if s.Rig != nil {
			d, err := model.DMaxFromRig(s.Rig)
			if err != nil {
				return nil, nil, "", fmt.Errorf("train: d_max from the rig: %w", err)
			}
			cfg.DMax = d
		}
		w, err := model.NewWeights(cfg, s.Seed)
		if err != nil {
			return nil, nil, "", fmt.Errorf("train: %w", err)
		}
		PrepareHeads(w)
		return w, nil, fmt.Sprintf("a fresh initialisation (seed %d, d_max %.4g of the width, heads prepared)", s.Seed, w.Config.DMax), nil
	}
	w, err := model.Default()
	return w, nil, "the embedded default weights", err
}
