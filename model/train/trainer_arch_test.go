package train

import (
	"encoding/json"
	"flag"
	"path/filepath"
	"testing"

	"github.com/parallaxdepth/parallax/internal/testutil"
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
	testutil.Golden(t, filepath.Join("..", "..", "testdata", "train", "default_arch.json"), append(got, '\n'), *updateArch,
		"go test ./model/train -run TestDefaultArchFile -update-arch")
}
