package model

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"strconv"
	"strings"

	"github.com/parallaxdepth/parallax/safetensors"
)

// FormatName and FormatVersion identify the metadata layout of a weights
// file (see the package documentation). Load rejects other versions.
const (
	FormatName    = "parallax-weights"
	FormatVersion = 1
)

// Metadata keys of a weights file. Every value is a string, as safetensors
// requires.
const (
	metaFormat        = "format"
	metaFormatVersion = "format_version"
	metaArch          = "arch"
	metaArchVersion   = "arch_version"
	metaConfig        = "config"
	metaWidth         = "input_width"
	metaHeight        = "input_height"
	metaDMax          = "d_max"
	metaProvenance    = "provenance."
)

// Weights holds the learned parameters of one network with the Config they
// belong to.
type Weights struct {
	// Config is the architecture instance (defaults filled in).
	Config Config
	// Params maps each parameter name of the architecture (see Arch.Params)
	// to its values, row-major in the parameter's shape.
	Params map[string][]float32
	// Provenance is free text about how the weights were made (data set,
	// steps, date, command line ...). It is stored with the weights.
	Provenance map[string]string
}

// NewWeights returns weights for c initialised for training: convolution
// weights drawn from a normal distribution with standard deviation
// sqrt(2 / fan_in) (He initialisation, common practice for ELU-like
// networks) and zero biases, from a generator seeded by seed.
func NewWeights(c Config, seed uint64) (*Weights, error) {
	a, err := Build(c)
	if err != nil {
		return nil, err
	}
	r := rand.New(rand.NewPCG(seed, 0x7061726178))
	w := &Weights{Config: a.Config, Params: make(map[string][]float32, len(a.Params)), Provenance: map[string]string{}}
	for _, p := range a.Params {
		v := make([]float32, p.Len())
		if len(p.Shape) == 4 {
			std := math.Sqrt(2 / float64(p.Shape[1]*p.Shape[2]*p.Shape[3]))
			for i := range v {
				v[i] = float32(r.NormFloat64() * std)
			}
		}
		w.Params[p.Name] = v
	}
	return w, nil
}

// Arch returns the architecture of w.Config. It returns an error if w is nil
// or its Config is invalid.
func (w *Weights) Arch() (*Arch, error) {
	if w == nil {
		return nil, errors.New("model: weights are nil")
	}
	return Build(w.Config)
}

// Check returns an error if w does not fit its architecture: a missing or
// unexpected parameter, a wrong length, or a non-finite value.
func (w *Weights) Check() error {
	a, err := w.Arch()
	if err != nil {
		return err
	}
	return w.check(a)
}

func (w *Weights) check(a *Arch) error {
	for _, p := range a.Params {
		v, ok := w.Params[p.Name]
		if !ok {
			return fmt.Errorf("model: parameter %q is missing", p.Name)
		}
		if len(v) != p.Len() {
			return fmt.Errorf("model: parameter %q has %d values, shape %v needs %d", p.Name, len(v), p.Shape, p.Len())
		}
		for i, x := range v {
			if math.IsNaN(float64(x)) || math.IsInf(float64(x), 0) {
				return fmt.Errorf("model: parameter %q has a non-finite value %v at index %d", p.Name, x, i)
			}
		}
	}
	if len(w.Params) != len(a.Params) {
		for _, name := range sortedKeys(w.Params) {
			if _, ok := a.Param(name); !ok {
				return fmt.Errorf("model: unexpected parameter %q: the architecture has no such tensor", name)
			}
		}
	}
	return nil
}

func sortedKeys[V any](m map[string]V) []string {
	k := make([]string, 0, len(m))
	for s := range m {
		k = append(k, s)
	}
	sort.Strings(k)
	return k
}

// Encode writes w to out in the safetensors format, storing values as dtype
// (safetensors.F32 or safetensors.F16; "" means F32). It returns an error
// if w does not pass Check. F16 rounds each value to nearest, ties to even;
// magnitudes above 65504 become infinite and are rejected.
func (w *Weights) Encode(out io.Writer, dtype safetensors.DType) error {
	ts, meta, dtype, err := w.encodable(dtype)
	if err != nil {
		return err
	}
	if err := safetensors.Write(out, ts, meta, dtype); err != nil {
		return fmt.Errorf("model: %w", err)
	}
	return nil
}

// encodable returns the tensors and metadata of w and the dtype to store
// them as, or an error if w does not pass Check or a value overflows dtype.
func (w *Weights) encodable(dtype safetensors.DType) ([]safetensors.Tensor, map[string]string, safetensors.DType, error) {
	if dtype == "" {
		dtype = safetensors.F32
	}
	if dtype != safetensors.F32 && dtype != safetensors.F16 {
		return nil, nil, "", fmt.Errorf("model: cannot store dtype %q; use F32 or F16", dtype)
	}
	ts, meta, err := w.Tensors()
	if err != nil {
		return nil, nil, "", err
	}
	if dtype == safetensors.F16 {
		for _, t := range ts {
			for k, v := range t.Data {
				if math.Abs(float64(v)) > 65504 && math.IsInf(float64(safetensors.Float16From(safetensors.Float16Bits(v))), 0) {
					return nil, nil, "", fmt.Errorf("model: parameter %q value %v at index %d overflows F16", t.Name, v, k)
				}
			}
		}
	}
	return ts, meta, dtype, nil
}

// Tensors returns the parameters of w as tensors in the order of
// Arch.Params (sharing w's slices) and the metadata that describes them
// (format, architecture, config, provenance; see the package
// documentation), ready for safetensors.Write. A program that stores more
// than the weights in one file (a training checkpoint, say) adds its own
// tensors and metadata keys and reads the weights back with
// WeightsFromTensors. It returns an error if w does not pass Check.
func (w *Weights) Tensors() ([]safetensors.Tensor, map[string]string, error) {
	a, err := w.Arch()
	if err != nil {
		return nil, nil, err
	}
	if err := w.check(a); err != nil {
		return nil, nil, err
	}
	ts := make([]safetensors.Tensor, len(a.Params))
	for i, p := range a.Params {
		ts[i] = safetensors.Tensor{Name: p.Name, Shape: p.Shape, Data: w.Params[p.Name]}
	}
	meta, err := w.metadata(a.Config)
	if err != nil {
		return nil, nil, err
	}
	return ts, meta, nil
}

func (w *Weights) metadata(c Config) (map[string]string, error) {
	cj, err := json.Marshal(c)
	if err != nil {
		return nil, fmt.Errorf("model: encoding config: %v", err)
	}
	m := map[string]string{
		metaFormat:        FormatName,
		metaFormatVersion: strconv.Itoa(FormatVersion),
		metaArch:          c.Arch,
		metaArchVersion:   strconv.Itoa(c.Version),
		metaConfig:        string(cj),
		metaWidth:         strconv.Itoa(c.Width),
		metaHeight:        strconv.Itoa(c.Height),
		metaDMax:          strconv.FormatFloat(c.DMax, 'g', -1, 64),
	}
	for k, v := range w.Provenance {
		if k == "" {
			return nil, fmt.Errorf("model: provenance has an empty key")
		}
		m[metaProvenance+k] = v
	}
	return m, nil
}

// Save writes w to the file path atomically (see safetensors.WriteFile),
// storing values as dtype (see Encode). A w that Encode refuses leaves no
// file behind and the old one, if any, unchanged.
func (w *Weights) Save(path string, dtype safetensors.DType) error {
	ts, meta, dtype, err := w.encodable(dtype)
	if err != nil {
		return err
	}
	if err := safetensors.WriteFile(path, ts, meta, dtype); err != nil {
		return fmt.Errorf("model: %w", err)
	}
	return nil
}

// Load reads weights saved by Save (or written by any tool that follows the
// format described in the package documentation), parsing the file once.
// It returns an error naming the field or tensor if the file is not a
// valid safetensors file (see safetensors.Parse), the format or
// architecture version is unknown, the config is out of range (an input
// larger than MaxNetPixels among others), or the tensors do not match the
// architecture in the file's config.
func Load(path string) (*Weights, error) {
	ts, meta, err := safetensors.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("model: %w", err)
	}
	w, err := WeightsFromTensors(ts, meta)
	if err != nil {
		return nil, fmt.Errorf("%w (file %s)", err, path)
	}
	return w, nil
}

// Decode parses weights from the bytes of a weights file; see Load.
func Decode(b []byte) (*Weights, error) {
	ts, meta, err := safetensors.Parse(b)
	if err != nil {
		return nil, fmt.Errorf("model: %w", err)
	}
	return WeightsFromTensors(ts, meta)
}

// WeightsFromTensors builds weights from the tensors and metadata of a
// weights file (see Tensors). It keeps the tensors' Data slices. The config
// is read and validated before anything else, so a file that claims an
// input larger than MaxNetPixels is refused before any allocation. It returns
// an error naming the field or tensor if the metadata is missing, of an
// unknown format version or inconsistent, or if a tensor is missing,
// unexpected, of the wrong shape or holds NaN or Inf. Extra metadata keys
// are ignored.
func WeightsFromTensors(ts []safetensors.Tensor, meta map[string]string) (*Weights, error) {
	c, err := configFromMetadata(meta)
	if err != nil {
		return nil, err
	}
	a, err := Build(c)
	if err != nil {
		return nil, err
	}
	w := &Weights{Config: a.Config, Params: make(map[string][]float32, len(ts)), Provenance: map[string]string{}}
	for k, v := range meta {
		if p, ok := strings.CutPrefix(k, metaProvenance); ok {
			w.Provenance[p] = v
		}
	}
	for _, t := range ts {
		p, ok := a.Param(t.Name)
		if !ok {
			return nil, fmt.Errorf("model: unexpected tensor %q: the architecture has no such parameter", t.Name)
		}
		if !slices.Equal(p.Shape, t.Shape) {
			return nil, fmt.Errorf("model: tensor %q has shape %v, the architecture wants %v", t.Name, t.Shape, p.Shape)
		}
		if _, dup := w.Params[t.Name]; dup {
			return nil, fmt.Errorf("model: tensor %q appears twice", t.Name)
		}
		w.Params[t.Name] = t.Data
	}
	for _, p := range a.Params {
		if _, ok := w.Params[p.Name]; !ok {
			return nil, fmt.Errorf("model: tensor %q is missing", p.Name)
		}
	}
	if err := w.check(a); err != nil {
		return nil, err
	}
	return w, nil
}

func configFromMetadata(meta map[string]string) (Config, error) {
	get := func(k string) (string, error) {
		v, ok := meta[k]
		if !ok {
			return "", fmt.Errorf("model: metadata field %q is missing", k)
		}
		return v, nil
	}
	var c Config
	if meta == nil {
		return c, fmt.Errorf("model: the file has no %s: not a weights file of this package", safetensors.MetadataKey)
	}
	f, err := get(metaFormat)
	if err != nil {
		return c, err
	}
	if f != FormatName {
		return c, fmt.Errorf("model: metadata field %q is %q, want %q", metaFormat, f, FormatName)
	}
	fv, err := get(metaFormatVersion)
	if err != nil {
		return c, err
	}
	if fv != strconv.Itoa(FormatVersion) {
		return c, fmt.Errorf("model: unsupported format_version %q (this build reads %d)", fv, FormatVersion)
	}
	cj, err := get(metaConfig)
	if err != nil {
		return c, err
	}
	dec := json.NewDecoder(strings.NewReader(cj))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&c); err != nil {
		return c, fmt.Errorf("model: metadata field %q: %v", metaConfig, err)
	}
	if err := c.Validate(); err != nil {
		return c, err
	}
	c = c.WithDefaults()
	// The plain fields repeat the config for readers that do not parse it;
	// they must agree.
	checks := []struct{ key, want string }{
		{metaArch, c.Arch},
		{metaArchVersion, strconv.Itoa(c.Version)},
		{metaWidth, strconv.Itoa(c.Width)},
		{metaHeight, strconv.Itoa(c.Height)},
	}
	for _, k := range checks {
		v, err := get(k.key)
		if err != nil {
			return c, err
		}
		if v != k.want {
			return c, fmt.Errorf("model: metadata field %q is %q but the config says %q", k.key, v, k.want)
		}
	}
	dv, err := get(metaDMax)
	if err != nil {
		return c, err
	}
	if d, err := strconv.ParseFloat(dv, 64); err != nil || d != c.DMax {
		return c, fmt.Errorf("model: metadata field %q is %q but the config says %v", metaDMax, dv, c.DMax)
	}
	return c, nil
}
