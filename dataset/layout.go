package dataset

import (
	"fmt"
	"path/filepath"
)

// Kind names a kind of ground truth: the folder under DIR/truth that holds
// it.
type Kind string

// The truth kinds a data set may hold.
const (
	DispLeft  Kind = "disp_left"  // left view's disparity, pixels (PFM)
	DispRight Kind = "disp_right" // right view's disparity, pixels (PFM)
	DepthLeft Kind = "depth_left" // left view's depth, metres (PFM)
	OccLeft   Kind = "occ_left"   // left occlusion map, 255 = hidden in the right view (PNG)
	OccRight  Kind = "occ_right"  // right occlusion map (PNG)
)

// kinds lists the truth kinds in the order Set.Truth and WriteRecord use.
var kinds = []Kind{DispLeft, DispRight, DepthLeft, OccLeft, OccRight}

// RigFile is the rig's file name in a data-set folder whose pairs share
// one rig.
const RigFile = "rig.json"

// RigsDir is the folder, in a data-set folder whose pairs have a rig each,
// of the pairs' rigs: RigsDir/NAME.json (see Kind.Path for NAME). A set has
// either RigFile or RigsDir, never both.
const RigsDir = "rigs"

// rigExt is the extension of the files in RigsDir.
const rigExt = ".json"

const (
	leftDir  = "left"
	rightDir = "right"
	truthDir = "truth"
)

// imageExts are the image extensions read, in any case.
var imageExts = []string{".png", ".jpg", ".jpeg"}

// ext returns the file extension of k's files.
func (k Kind) ext() string {
	if k == OccLeft || k == OccRight {
		return ".png"
	}
	return ".pfm"
}

func (k Kind) check() error {
	for _, c := range kinds {
		if k == c {
			return nil
		}
	}
	return fmt.Errorf("dataset: unknown truth kind %q", string(k))
}

// Path returns the path, relative to a data-set folder, of pair name's
// truth of kind k: "truth/disp_left/NAME.pfm".
func (k Kind) Path(name string) string {
	return filepath.Join(truthDir, string(k), name+k.ext())
}
