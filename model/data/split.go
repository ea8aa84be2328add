package data

import (
	"fmt"
	"math/rand/v2"
	"slices"

	"github.com/parallaxdepth/parallax/dataset"
)

// Split divides ds into a training and a validation set: the pairs are
// shuffled by seed and the first round(valFraction·len) go to validation,
// each set keeping name order. valFraction must be in [0, 1); a non-zero
// fraction leaves at least one pair in each set, so it returns an error for
// a set of one pair. A zero fraction returns all pairs for training and a
// nil validation set.
func Split(ds *dataset.Set, valFraction float64, seed uint64) (train, val *dataset.Set, err error) {
	if !(valFraction >= 0 && valFraction < 1) {
		return nil, nil, fmt.Errorf("data: validation fraction %v must be in [0, 1)", valFraction)
	}
	n := len(ds.Pairs)
	nv := int(valFraction*float64(n) + 0.5)
	if valFraction > 0 && nv == 0 {
		nv = 1
	}
	if nv >= n && nv > 0 {
		return nil, nil, fmt.Errorf("data: cannot split %d pairs into training and validation by %v", n, valFraction)
	}
	if nv == 0 {
		return &dataset.Set{Dir: ds.Dir, Rig: ds.Rig, Truth: ds.Truth, Pairs: slices.Clone(ds.Pairs)}, nil, nil
	}
	perm := permutation(n, rand.New(rand.NewPCG(seed, splitStream)))
	isVal := make([]bool, n)
	for _, i := range perm[:nv] {
		isVal[i] = true
	}
	train = &dataset.Set{Dir: ds.Dir, Rig: ds.Rig, Truth: ds.Truth}
	val = &dataset.Set{Dir: ds.Dir, Rig: ds.Rig, Truth: ds.Truth}
	for i, p := range ds.Pairs {
		if isVal[i] {
			val.Pairs = append(val.Pairs, p)
		} else {
			train.Pairs = append(train.Pairs, p)
		}
	}
	return train, val, nil
}

// Stream constants keep the generators for different purposes apart.
const (
	splitStream   = 0x73706c6974
	shuffleStream = 0x73687566
	augmentStream = 0x61756700
)

// permutation returns a Fisher–Yates shuffle of 0 … n−1. It is written out
// (rather than rand.Shuffle) so that the order is fixed by this code alone.
func permutation(n int, r *rand.Rand) []int {
	p := make([]int, n)
	for i := range p {
		p[i] = i
	}
	for i := n - 1; i > 0; i-- {
		j := int(r.Uint64() % uint64(i+1)) // bias below 2^-40 for any real dataset
		p[i], p[j] = p[j], p[i]
	}
	return p
}
