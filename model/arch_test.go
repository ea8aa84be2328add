package model

import (
	"encoding/json"
	"flag"
	"math"
	"path/filepath"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/internal/testutil"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/model")

// tinyConfig is the small instance used by the cross-checks with PyTorch.
var tinyConfig = Config{Width: 128, Height: 64, Encoder: []int{4, 4, 8, 8, 8}, Decoder: []int{4, 4, 4, 8, 8}, DMax: 0.25}

func TestDefaultParamBudget(t *testing.T) {
	a, err := Build(Config{})
	if err != nil {
		t.Fatal(err)
	}
	// Budget from the task: at most 1.5 M parameters. The exact count is
	// computed by hand from the layer list in doc.go (9·in·out + out per
	// convolution) and guards against an accidental change of the wiring.
	const budget, want = 1_500_000, 929_352
	if n := a.NumParams(); n > budget || n != want {
		t.Fatalf("default network has %d parameters, want %d (budget %d)", n, want, budget)
	}
	var byHand int
	for _, l := range a.Layers {
		if l.Op != OpConv {
			continue
		}
		in, _ := a.Shape(l.Inputs[0])
		byHand += 9*in.C*l.Out.C + l.Out.C
	}
	if byHand != a.NumParams() {
		t.Fatalf("layer list implies %d parameters, Params holds %d", byHand, a.NumParams())
	}
}

func TestArchWiring(t *testing.T) {
	for _, c := range []Config{{}, tinyConfig, {Width: 320, Height: 96}, {Width: 64, Height: 64}} {
		a, err := Build(c)
		if err != nil {
			t.Fatal(err)
		}
		cfg := a.Config
		seen := map[string]bool{InputName: true}
		for _, l := range a.Layers {
			if seen[l.Name] {
				t.Fatalf("%s: layer name %q used twice", cfg.Shape(), l.Name)
			}
			for _, in := range l.Inputs {
				if !seen[in] {
					t.Fatalf("%s: layer %q reads %q before it is computed", cfg.Shape(), l.Name, in)
				}
			}
			seen[l.Name] = true
			in, _ := a.Shape(l.Inputs[0])
			switch l.Op {
			case OpConv:
				if got := (TensorShape{l.Out.C, in.H / l.Stride, in.W / l.Stride}); got != l.Out {
					t.Errorf("%s: conv %q: out %v, want %v", cfg.Shape(), l.Name, l.Out, got)
				}
			case OpUpsample:
				if got := (TensorShape{in.C, 2 * in.H, 2 * in.W}); got != l.Out {
					t.Errorf("%s: upsample %q: out %v, want %v", cfg.Shape(), l.Name, l.Out, got)
				}
			case OpConcat:
				c := 0
				for _, n := range l.Inputs {
					s, _ := a.Shape(n)
					if s.H != l.Out.H || s.W != l.Out.W {
						t.Errorf("%s: concat %q joins %q of %v into %v", cfg.Shape(), l.Name, n, s, l.Out)
					}
					c += s.C
				}
				if c != l.Out.C {
					t.Errorf("%s: concat %q: %d channels, want %d", cfg.Shape(), l.Name, l.Out.C, c)
				}
			}
		}
		for s, name := range a.Outputs {
			sh, ok := a.Shape(name)
			want := TensorShape{2, cfg.Height >> s, cfg.Width >> s}
			if !ok || sh != want || name != OutputName(s) {
				t.Errorf("%s: output %d is %q %v, want %q %v", cfg.Shape(), s, name, sh, OutputName(s), want)
			}
		}
		// Every output ends with sigmoid · DMax.
		for _, l := range a.Layers {
			if strings.HasPrefix(l.Name, "disp") && !strings.HasSuffix(l.Name, ".up") {
				if l.Op != OpScale || l.Factor != cfg.DMax {
					t.Errorf("%q is not scaled by d_max", l.Name)
				}
			}
		}
	}
}

func (c Config) Shape() string {
	c = c.WithDefaults()
	return TensorShape{3, c.Height, c.Width}.String()
}

func TestConfigValidate(t *testing.T) {
	for _, tc := range []struct {
		c    Config
		want string
	}{
		{Config{Width: 100}, "width 100"},
		{Config{Height: 16}, "height 16"},
		{Config{Height: 32}, "height 32"},
		{Config{Arch: "other"}, "unknown architecture"},
		{Config{Version: 7}, "version 7"},
		{Config{Encoder: []int{1, 2}}, "encoder has 2"},
		{Config{Decoder: []int{1, 2, 3, 4, 0}}, "decoder width 0"},
		{Config{Encoder: []int{1, 2, 3, 4, 5000}}, "encoder width 5000"},
		{Config{DMax: 1.5}, "d_max 1.5"},
		{Config{DMax: -0.1}, "d_max -0.1"},
	} {
		err := tc.c.Validate()
		if err == nil || !strings.HasPrefix(err.Error(), "model: ") || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("Validate(%+v) = %v, want an error containing %q", tc.c, err, tc.want)
		}
	}
	if err := (Config{}).Validate(); err != nil {
		t.Errorf("zero Config: %v", err)
	}
}

func TestDMax(t *testing.T) {
	// d_max = f·B / Z_min / W (disparity in pixels is f·B/Z; divide by W
	// for a fraction of the width; common practice). f = 700 px, B = 0.12 m,
	// Z_min = 0.5 m, W = 640: 168 px, 0.2625 of the width.
	d, err := DMax(700, 0.12, 0.5, 640)
	if err != nil || d != 700*0.12/0.5/640 || d < 0.2624 || d > 0.2626 {
		t.Fatalf("DMax = %v, %v; want 0.2625", d, err)
	}
	for _, bad := range [][3]float64{{0, 1, 1}, {1, 0, 1}, {1, 1, 0}, {1, 1, -1}, {700, 0.12, 0.01}} {
		if _, err := DMax(bad[0], bad[1], bad[2], 640); err == nil || !strings.HasPrefix(err.Error(), "model: ") {
			t.Errorf("DMax(%v) = %v, want a model: error", bad, err)
		}
	}
}

// TestTinyArchGolden pins the text form of the tiny architecture that
// testdata/model/gen_st.py reads to build its PyTorch fixtures. Run with
// -update after changing the network, then rerun the script.
func TestTinyArchGolden(t *testing.T) {
	a, err := Build(tinyConfig)
	if err != nil {
		t.Fatal(err)
	}
	got, err := json.MarshalIndent(a, "", " ")
	if err != nil {
		t.Fatal(err)
	}
	testutil.Golden(t, filepath.Join("..", "testdata", "model", "tiny_arch.json"), append(got, '\n'), *update,
		"go test -run TestTinyArchGolden -update and testdata/model/gen_st.py")
}

func TestDMaxFromRig(t *testing.T) {
	// Middlebury 2014 Motorcycle calibration (as in depth.ReadRig's doc):
	// f = 994.978 px, B = 0.193001 m, Δcx = 31.086 px, W = 741; with
	// Z_min = 0.5 m the disparity is f·B/Z − Δcx = 352.97 px.
	r := &depth.Rig{Width: 741, Height: 500, Baseline: 0.193001, DeltaCx: 31.086,
		Fx: 994.978, Fy: 994.978, Cx: 311.193, Cy: 254.877, MinDepth: 0.5, MaxDepth: 10}
	d, err := DMaxFromRig(r)
	want := (994.978*0.193001/0.5 - 31.086) / 741
	if err != nil || math.Abs(d-want) > 1e-12 || math.Abs(d-0.47634) > 1e-4 {
		t.Fatalf("DMaxFromRig = %v, %v; want %v", d, err, want)
	}
	r.DeltaCx = 0
	d0, _ := DMaxFromRig(r)
	if dm, _ := DMax(r.Fx, r.Baseline, r.MinDepth, r.Width); d0 != dm {
		t.Errorf("DMaxFromRig with Δcx 0 = %v, DMax = %v", d0, dm)
	}
	r.MinDepth = 0
	if _, err := DMaxFromRig(r); err == nil || !strings.HasPrefix(err.Error(), "model: ") {
		t.Errorf("MinDepth 0: %v", err)
	}
	r.MinDepth = 0.1
	if _, err := DMaxFromRig(r); err == nil || !strings.Contains(err.Error(), "too close") {
		t.Errorf("MinDepth 0.1: %v", err)
	}
	if _, err := DMaxFromRig(nil); err == nil {
		t.Error("nil rig accepted")
	}
}

func TestSummary(t *testing.T) {
	a, _ := Build(Config{})
	s := a.Summary()
	lines := strings.Split(strings.TrimSpace(s), "\n")
	if len(lines) != len(a.Layers)+2 || !strings.HasSuffix(lines[len(lines)-1], "929352 parameters") {
		t.Fatalf("summary has %d lines, last %q", len(lines), lines[len(lines)-1])
	}
	if !strings.Contains(s, "conv3x3/2 reflect elu") || !strings.Contains(s, "upsample2x bilinear") || !strings.Contains(s, "scale 0.3") {
		t.Errorf("summary lacks settings:\n%s", s)
	}
}
