package train

import (
	"bytes"
	"encoding/json"
	"fmt"
	"slices"
	"sort"
	"strconv"
	"strings"

	"github.com/parallaxdepth/parallax/loss"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/safetensors"
)

// CheckpointFormat and CheckpointVersion identify a checkpoint file (the
// metadata fields checkpoint.format and checkpoint.version).
// LoadCheckpoint rejects other versions.
const (
	CheckpointFormat  = "parallax-checkpoint"
	CheckpointVersion = 1
)

// Tensor-name prefixes of Adam's moments in a checkpoint file.
const (
	momentPrefix1 = "adam.m."
	momentPrefix2 = "adam.v."
)

// Checkpoint is the state of a training run, enough to continue it exactly:
// the weights, the solver's state and the position in the data order. The
// data order and the augmentation of package data are functions of the
// seed, the epoch and the position in the epoch, so the seed and the
// number of batches consumed are the whole random state.
//
// A checkpoint file is a safetensors file (package safetensors):
// the weights' tensors and metadata as in a weights file (see package
// model), plus F32 tensors adam.m.NAME and adam.v.NAME (Adam's moments
// for parameter NAME, in its shape) and these metadata fields, all
// decimal strings unless said otherwise:
//
//	checkpoint.format             "parallax-checkpoint"
//	checkpoint.version            "1"
//	checkpoint.step               batches consumed (steps done, skipped ones included)
//	checkpoint.steps              the run's total number of steps
//	checkpoint.adam_step          updates applied (Adam's t)
//	checkpoint.skips              steps skipped for NaN or Inf
//	checkpoint.seed               the data seed
//	checkpoint.batch              batch size
//	checkpoint.batches_per_epoch  batches per epoch
//	checkpoint.schedule           the learning-rate Schedule as JSON, defaults filled in
//	checkpoint.first_terms        the loss terms of the run's first step as JSON
//
// Weights are always stored as F32 so that a resumed run is bit for bit the
// uninterrupted one. model.Load refuses a checkpoint (it has tensors that
// are not parameters); use LoadCheckpoint and its Weights, or LoadWeights,
// which reads either kind of file.
type Checkpoint struct {
	// Weights are the network's parameters and configuration.
	Weights *model.Weights
	// Solver is Adam's state: updates applied and moments per parameter.
	Solver AdamState
	// Step is the number of steps done (batches consumed), skipped ones
	// included; Steps is the run's total.
	Step, Steps int
	// Skips counts the steps skipped for NaN or Inf.
	Skips int
	// Seed is the data seed of the run.
	Seed uint64
	// Batch is the batch size; BatchesPerEpoch the length of an epoch.
	Batch, BatchesPerEpoch int
	// Schedule is the learning-rate schedule, defaults filled in.
	Schedule Schedule
	// FirstTerms are the loss terms of the run's first step, kept so that a
	// resumed run can report start versus end.
	FirstTerms loss.Terms
}

const (
	metaCkFormat   = "checkpoint.format"
	metaCkVersion  = "checkpoint.version"
	metaCkStep     = "checkpoint.step"
	metaCkSteps    = "checkpoint.steps"
	metaCkAdamStep = "checkpoint.adam_step"
	metaCkSkips    = "checkpoint.skips"
	metaCkSeed     = "checkpoint.seed"
	metaCkBatch    = "checkpoint.batch"
	metaCkPerEpoch = "checkpoint.batches_per_epoch"
	metaCkSchedule = "checkpoint.schedule"
	metaCkFirst    = "checkpoint.first_terms"
)

// SaveCheckpoint writes c to path atomically (a temporary file in the same
// directory, synced, then renamed over path; see safetensors.WriteFile).
// It returns an error if the weights are invalid or a moment does not
// match its parameter; one for a full disk wraps ErrNoSpace and gives the
// free space and the checkpoint's size.
func SaveCheckpoint(path string, c *Checkpoint) error {
	if c == nil || c.Weights == nil {
		return fmt.Errorf("train: checkpoint: nothing to save")
	}
	ts, wmeta, err := c.Weights.Tensors()
	if err != nil {
		return fmt.Errorf("train: checkpoint: %w", err)
	}
	meta := make(map[string]string, len(wmeta)+12)
	for k, v := range wmeta {
		meta[k] = v
	}
	sched, err := json.Marshal(c.Schedule)
	if err != nil {
		return fmt.Errorf("train: checkpoint: %v", err)
	}
	first, err := json.Marshal(c.FirstTerms)
	if err != nil {
		return fmt.Errorf("train: checkpoint: first terms: %v", err)
	}
	meta[metaCkFormat] = CheckpointFormat
	meta[metaCkVersion] = strconv.Itoa(CheckpointVersion)
	meta[metaCkStep] = strconv.Itoa(c.Step)
	meta[metaCkSteps] = strconv.Itoa(c.Steps)
	meta[metaCkAdamStep] = strconv.Itoa(c.Solver.Step)
	meta[metaCkSkips] = strconv.Itoa(c.Skips)
	meta[metaCkSeed] = strconv.FormatUint(c.Seed, 10)
	meta[metaCkBatch] = strconv.Itoa(c.Batch)
	meta[metaCkPerEpoch] = strconv.Itoa(c.BatchesPerEpoch)
	meta[metaCkSchedule] = string(sched)
	meta[metaCkFirst] = string(first)

	shapes := make(map[string][]int, len(ts))
	for _, t := range ts {
		shapes[t.Name] = t.Shape
	}
	names := make([]string, 0, len(c.Solver.M))
	for name := range c.Solver.M {
		names = append(names, name)
	}
	sort.Strings(names)
	for _, name := range names {
		shape, ok := shapes[name]
		m, v := c.Solver.M[name], c.Solver.V[name]
		if !ok {
			return fmt.Errorf("train: checkpoint: solver state for %q, which is not a parameter", name)
		}
		if len(m) != len(c.Weights.Params[name]) || len(v) != len(m) {
			return fmt.Errorf("train: checkpoint: moments of %q do not match the parameter", name)
		}
		ts = append(ts, safetensors.Tensor{Name: momentPrefix1 + name, Shape: shape, Data: m},
			safetensors.Tensor{Name: momentPrefix2 + name, Shape: shape, Data: v})
	}
	var buf bytes.Buffer
	if err := safetensors.Write(&buf, ts, meta, safetensors.F32); err != nil {
		return fmt.Errorf("train: checkpoint: %w", err)
	}
	return writeOutput(path, "train: checkpoint", buf.Bytes())
}

// LoadCheckpoint reads a checkpoint written by SaveCheckpoint. It returns
// an error naming the field or tensor if the file is not a safetensors
// file, is truncated, is not a checkpoint, has an unknown version, holds
// weights that do not fit their architecture, or holds moments that are
// missing, of the wrong shape, or invalid.
func LoadCheckpoint(path string) (*Checkpoint, error) {
	ts, meta, err := safetensors.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("train: checkpoint: %w", err)
	}
	c, err := checkpointFrom(ts, meta)
	if err != nil {
		return nil, fmt.Errorf("train: checkpoint %s: %w", path, err)
	}
	return c, nil
}

// LoadWeights reads the weights of a weights file (see model.Load) or of a
// checkpoint (see LoadCheckpoint), whichever path holds, parsing the file
// once. The second result reports whether the file was a checkpoint. Its
// errors are those of model.Load or of LoadCheckpoint, by the kind of file
// its metadata names.
func LoadWeights(path string) (*model.Weights, bool, error) {
	ts, meta, err := safetensors.ReadFile(path)
	if err != nil {
		return nil, false, fmt.Errorf("train: %w", err)
	}
	if _, ok := meta[metaCkFormat]; ok {
		c, err := checkpointFrom(ts, meta)
		if err != nil {
			return nil, true, fmt.Errorf("train: checkpoint %s: %w", path, err)
		}
		return c.Weights, true, nil
	}
	w, err := model.WeightsFromTensors(ts, meta)
	if err != nil {
		return nil, false, fmt.Errorf("train: %w (file %s)", err, path)
	}
	return w, false, nil
}

func checkpointFrom(ts []safetensors.Tensor, meta map[string]string) (*Checkpoint, error) {
	if meta[metaCkFormat] != CheckpointFormat {
		return nil, fmt.Errorf("metadata field %q is %q, want %q: not a training checkpoint", metaCkFormat, meta[metaCkFormat], CheckpointFormat)
	}
	if v := meta[metaCkVersion]; v != strconv.Itoa(CheckpointVersion) {
		return nil, fmt.Errorf("unsupported %s %q (this build reads %d)", metaCkVersion, v, CheckpointVersion)
	}
	c := &Checkpoint{}
	ints := []struct {
		key string
		dst *int
		min int
	}{
		{metaCkStep, &c.Step, 0}, {metaCkSteps, &c.Steps, 1}, {metaCkAdamStep, &c.Solver.Step, 0},
		{metaCkSkips, &c.Skips, 0}, {metaCkBatch, &c.Batch, 1}, {metaCkPerEpoch, &c.BatchesPerEpoch, 1},
	}
	for _, f := range ints {
		s, ok := meta[f.key]
		if !ok {
			return nil, fmt.Errorf("metadata field %q is missing", f.key)
		}
		v, err := strconv.Atoi(s)
		if err != nil || v < f.min {
			return nil, fmt.Errorf("metadata field %q is %q, want an integer of at least %d", f.key, s, f.min)
		}
		*f.dst = v
	}
	if c.Solver.Step+c.Skips != c.Step {
		return nil, fmt.Errorf("metadata: %d updates and %d skipped steps do not add up to step %d", c.Solver.Step, c.Skips, c.Step)
	}
	seed, err := strconv.ParseUint(meta[metaCkSeed], 10, 64)
	if err != nil {
		return nil, fmt.Errorf("metadata field %q is %q, want an unsigned integer", metaCkSeed, meta[metaCkSeed])
	}
	c.Seed = seed
	for _, f := range []struct {
		key string
		dst any
	}{{metaCkSchedule, &c.Schedule}, {metaCkFirst, &c.FirstTerms}} {
		dec := json.NewDecoder(strings.NewReader(meta[f.key]))
		dec.DisallowUnknownFields()
		if err := dec.Decode(f.dst); err != nil {
			return nil, fmt.Errorf("metadata field %q: %v", f.key, err)
		}
	}
	if _, err := c.Schedule.withDefaults(c.Steps); err != nil {
		return nil, err
	}

	var params []safetensors.Tensor
	c.Solver.M, c.Solver.V = map[string][]float32{}, map[string][]float32{}
	moments := map[string]safetensors.Tensor{}
	for _, t := range ts {
		if strings.HasPrefix(t.Name, momentPrefix1) || strings.HasPrefix(t.Name, momentPrefix2) {
			moments[t.Name] = t
			continue
		}
		params = append(params, t)
	}
	w, err := model.WeightsFromTensors(params, meta)
	if err != nil {
		return nil, err
	}
	c.Weights = w
	shapes := map[string][]int{}
	for _, t := range params {
		shapes[t.Name] = t.Shape
	}
	for name, t := range moments {
		param, _ := strings.CutPrefix(name, momentPrefix1)
		param, _ = strings.CutPrefix(param, momentPrefix2)
		shape, ok := shapes[param]
		if !ok {
			return nil, fmt.Errorf("tensor %q is a moment of %q, which is not a parameter", name, param)
		}
		if !slices.Equal(shape, t.Shape) {
			return nil, fmt.Errorf("tensor %q has shape %v, its parameter %v", name, t.Shape, shape)
		}
		if strings.HasPrefix(name, momentPrefix1) {
			c.Solver.M[param] = t.Data
		} else {
			c.Solver.V[param] = t.Data
		}
	}
	if c.Solver.Step > 0 {
		for name := range shapes {
			if c.Solver.M[name] == nil || c.Solver.V[name] == nil {
				return nil, fmt.Errorf("the moments of parameter %q are missing", name)
			}
		}
	} else if len(moments) > 0 {
		return nil, fmt.Errorf("moments are stored but no update was applied")
	}
	if err := NewAdam(nil).SetState(c.Solver); err != nil {
		return nil, err
	}
	return c, nil
}
