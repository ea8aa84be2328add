// Command killcheck serves testdata/hardening/kill_trial.sh:
//
//	killcheck step CHECKPOINT   loads a training checkpoint (train.LoadCheckpoint) and prints its step and total
//	killcheck same A B          exits 0 if the weights files A and B hold the same tensors bit for bit
//
// Metadata (provenance, dates, the command line) is not compared.
package main

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"math"
	"os"

	"github.com/parallaxdepth/parallax/model/train"
	"github.com/parallaxdepth/parallax/safetensors"
)

func main() {
	if err := run(os.Args[1:]); err != nil {
		fmt.Fprintln(os.Stderr, "killcheck:", err)
		os.Exit(1)
	}
}

func run(args []string) error {
	switch {
	case len(args) == 2 && args[0] == "step":
		c, err := train.LoadCheckpoint(args[1])
		if err != nil {
			return err
		}
		fmt.Println(c.Step, c.Steps)
		return nil
	case len(args) == 3 && args[0] == "same":
		return same(args[1], args[2])
	}
	return fmt.Errorf("usage: killcheck step CHECKPOINT | killcheck same A B")
}

func same(a, b string) error {
	ta, _, err := safetensors.ReadFile(a)
	if err != nil {
		return err
	}
	tb, _, err := safetensors.ReadFile(b)
	if err != nil {
		return err
	}
	byName := map[string]safetensors.Tensor{}
	for _, t := range tb {
		byName[t.Name] = t
	}
	if len(ta) != len(tb) {
		return fmt.Errorf("%s has %d tensors, %s %d", a, len(ta), b, len(tb))
	}
	for _, t := range ta {
		u, ok := byName[t.Name]
		if !ok {
			return fmt.Errorf("tensor %s of %s is missing from %s", t.Name, a, b)
		}
		if fmt.Sprint(t.Shape) != fmt.Sprint(u.Shape) || !bytes.Equal(bits(t.Data), bits(u.Data)) {
			return fmt.Errorf("tensor %s differs between %s and %s", t.Name, a, b)
		}
	}
	return nil
}

// bits returns the IEEE bits of v, so that NaNs and signed zeros compare exactly.
func bits(v []float32) []byte {
	b := make([]byte, 4*len(v))
	for i, f := range v {
		binary.LittleEndian.PutUint32(b[4*i:], math.Float32bits(f))
	}
	return b
}
