package train

import (
	"bytes"
	"encoding/json"
	"flag"
	"os"
	"path/filepath"
	"testing"

	"github.com/parallaxdepth/parallax/model"
)

var updateArch = flag.Bool("update-arch", false, "rewrite testdata/train/default_arch.json")

// testdata/train/default_arch.json is the default architecture's layer
// list, which testdata/train/step_torch.py walks to build the same network
// in PyTorch for the side-by-side timing of a training step. Run with
// -update-arch after changing the network.
func TestDefaultArchFile(t *testing.T) {
	a, err := model.Build(model.Config{})
	if err != nil {
		t.Fatal(err)
	}
	got, err := json.MarshalIndent(a, "", " ")
	if err != nil {
		t.Fatal(err)
	}
	got = append(got, '\n')
	path := filepath.Join("..", "..", "testdata", "train", "default_arch.json")
	if *updateArch {
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(got, want) {
		t.Fatalf("%s is stale: rerun go test ./model/train -run TestDefaultArchFile -update-arch", path)
	}
}
