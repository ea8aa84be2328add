package data

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math/rand/v2"
	"strings"
	"sync"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/planar"
)

// Options configures a Loader. A nil *Options means the defaults; each zero
// field means its default.
type Options struct {
	// Width and Height are the output size; 0 means the pairs' stored width
	// (height), which must then be the same for every pair. A network
	// wants its input size here (model.Config.Width and Height).
	Width, Height int
	// BatchSize is the number of samples per batch; 0 means 8.
	BatchSize int
	// Shuffle reorders the pairs every epoch, by Seed and the epoch number.
	Shuffle bool
	// Seed seeds shuffling and augmentation.
	Seed uint64
	// Augment, if not nil, is applied to every sample.
	Augment *Augment
	// Prefetch is the number of batches prepared ahead in goroutines; 0
	// means 2, and a value above the number of pairs is lowered to it.
	// At most Prefetch+1 batches exist at once besides those the caller
	// holds.
	Prefetch int
	// DropPartial drops the last batch of an epoch if it is smaller than
	// BatchSize.
	DropPartial bool
	// MinSide is the smallest stored width and height a pair may have:
	// NewLoader refuses a set with a smaller pair, naming it and its size.
	// A trainer sets it to the smallest input its network takes
	// (model.MinSide), so that a 1×1 pair is not blown up to the training
	// size. 0 means no minimum.
	MinSide int
	// Cache keeps every sample once it is loaded and resized (before
	// augmentation), for a small set read many times (adaptation on a
	// few pairs, a validation set): later epochs read no file. It holds
	// 4 bytes for every value of every map of every pair (24 bytes a
	// pixel for the two views alone) and has no bound of its own: the
	// caller sizes it (train.NewDatasetSource turns it on below
	// train.CacheBytes).
	Cache bool
}

// Batch is BatchSize samples (fewer for the last batch of an epoch unless
// Options.DropPartial), stacked.
type Batch struct {
	// Names of the pairs, in batch order.
	Names []string
	// Left and Right are N×3×H×W.
	Left, Right *planar.Image
	// DispLeft and DispRight are N×1×H×W fractions of the width, 0 where
	// there is no ground truth; nil if the dataset has none of that kind.
	DispLeft, DispRight *planar.Image
	// DepthLeft (metres) is N×1×H×W or nil; flipped samples hold zeros.
	DepthLeft *planar.Image
	// OccLeft and OccRight are N×1×H×W or nil.
	OccLeft, OccRight *planar.Image
	// Flipped[i] reports that sample i was mirrored and its views swapped.
	Flipped []bool
}

// Loader serves a data set as batches.
type Loader struct {
	ds  *dataset.Set
	opt Options
	// cache holds pair i's resized sample once loaded (Options.Cache).
	mu    sync.Mutex
	cache []*Sample
}

// NewLoader returns a loader over ds. It returns an error for an empty
// set, invalid options, a zero Width or Height over pairs of different
// stored sizes, or a pair smaller than Options.MinSide.
func NewLoader(ds *dataset.Set, opt *Options) (*Loader, error) {
	var o Options
	if opt != nil {
		o = *opt
	}
	if ds == nil || len(ds.Pairs) == 0 {
		return nil, errors.New("data: the dataset has no pairs")
	}
	if o.MinSide < 0 {
		return nil, fmt.Errorf("data: invalid options: minimum side %d", o.MinSide)
	}
	var small []string
	for _, p := range ds.Pairs {
		if p.Width < o.MinSide || p.Height < o.MinSide {
			small = append(small, fmt.Sprintf("%q is %d×%d", p.Name, p.Width, p.Height))
		}
	}
	if len(small) > 0 {
		n := len(small)
		if n > 5 {
			small = append(small[:5], fmt.Sprintf("and %d more", n-5))
		}
		return nil, fmt.Errorf("data: %d pairs too small for the network, which needs at least %d×%d: %s", n, o.MinSide, o.MinSide, strings.Join(small, ", "))
	}
	if o.Width == 0 || o.Height == 0 {
		p0 := ds.Pairs[0]
		for _, p := range ds.Pairs[1:] {
			if (o.Width == 0 && p.Width != p0.Width) || (o.Height == 0 && p.Height != p0.Height) {
				return nil, fmt.Errorf("data: pairs %q (%d×%d) and %q (%d×%d) differ in size: give Options.Width and Height", p0.Name, p0.Width, p0.Height, p.Name, p.Width, p.Height)
			}
		}
		if o.Width == 0 {
			o.Width = p0.Width
		}
		if o.Height == 0 {
			o.Height = p0.Height
		}
	}
	if o.BatchSize == 0 {
		o.BatchSize = 8
	}
	if o.Prefetch == 0 {
		o.Prefetch = 2
	}
	if o.Width < 1 || o.Height < 1 || o.BatchSize < 1 || o.Prefetch < 1 {
		return nil, fmt.Errorf("data: invalid options: size %d×%d, batch size %d, prefetch %d", o.Width, o.Height, o.BatchSize, o.Prefetch)
	}
	if o.Width > planar.MaxSide || o.Height > planar.MaxSide || o.BatchSize > planar.MaxValues/3/o.Height/o.Width {
		return nil, fmt.Errorf("data: a batch of %d images of %d×%d exceeds %d values", o.BatchSize, o.Width, o.Height, planar.MaxValues)
	}
	// More batches ahead than pairs would only size the channels.
	o.Prefetch = min(o.Prefetch, len(ds.Pairs))
	if o.Augment != nil {
		a := *o.Augment
		if err := a.Validate(); err != nil {
			return nil, err
		}
		o.Augment = &a
	}
	if o.DropPartial && len(ds.Pairs) < o.BatchSize {
		return nil, fmt.Errorf("data: %d pairs make no full batch of %d", len(ds.Pairs), o.BatchSize)
	}
	l := &Loader{ds: ds, opt: o}
	if o.Cache {
		l.cache = make([]*Sample, len(ds.Pairs))
	}
	return l, nil
}

// sample returns pair i's sample at the output size, to be augmented: a
// copy of the cached one under Options.Cache.
func (l *Loader) sample(i int) (*Sample, error) {
	if l.cache == nil {
		return LoadSample(l.ds, i, l.opt.Width, l.opt.Height)
	}
	l.mu.Lock()
	s := l.cache[i]
	l.mu.Unlock()
	if s == nil {
		var err error
		if s, err = LoadSample(l.ds, i, l.opt.Width, l.opt.Height); err != nil {
			return nil, err
		}
		l.mu.Lock()
		l.cache[i] = s
		l.mu.Unlock()
	}
	if l.opt.Augment == nil {
		return s, nil // batch only copies it
	}
	return s.clone(), nil
}

// NumBatches returns the number of batches in one epoch.
func (l *Loader) NumBatches() int {
	n := len(l.ds.Pairs)
	if l.opt.DropPartial {
		return n / l.opt.BatchSize
	}
	return (n + l.opt.BatchSize - 1) / l.opt.BatchSize
}

// Order returns the pair indices of epoch in the order they are served.
func (l *Loader) Order(epoch int) []int {
	n := len(l.ds.Pairs)
	if !l.opt.Shuffle {
		p := make([]int, n)
		for i := range p {
			p[i] = i
		}
		return p
	}
	return permutation(n, rand.New(rand.NewPCG(l.opt.Seed, shuffleStream^uint64(epoch)<<20)))
}

// Iter walks the batches of one epoch. Call Close when done, also after an
// error or io.EOF.
type Iter struct {
	pending chan chan result
	cancel  context.CancelFunc
	wg      sync.WaitGroup
	err     error
}

type result struct {
	b   *Batch
	err error
}

// Epoch starts serving epoch number epoch. Batches are prepared by up to
// Options.Prefetch goroutines and delivered in order; the result does not
// depend on the number of goroutines. Cancelling ctx stops the workers.
func (l *Loader) Epoch(ctx context.Context, epoch int) *Iter {
	ctx, cancel := context.WithCancel(ctx)
	it := &Iter{pending: make(chan chan result, l.opt.Prefetch), cancel: cancel}
	order := l.Order(epoch)
	nb := l.NumBatches()
	sem := make(chan struct{}, l.opt.Prefetch)
	it.wg.Add(1)
	go func() {
		defer it.wg.Done()
		defer close(it.pending)
		for k := 0; k < nb; k++ {
			select {
			case sem <- struct{}{}:
			case <-ctx.Done():
				return
			}
			slot := make(chan result, 1)
			select {
			case it.pending <- slot:
			case <-ctx.Done():
				return
			}
			lo := k * l.opt.BatchSize
			idx := order[lo:min(lo+l.opt.BatchSize, len(order))]
			it.wg.Add(1)
			go func() {
				defer it.wg.Done()
				defer func() { <-sem }()
				b, err := l.batch(ctx, epoch, lo, idx)
				slot <- result{b, err}
			}()
		}
	}()
	return it
}

// Next returns the next batch, io.EOF after the last one, or the first
// error met (naming the file); after an error every call returns it.
func (it *Iter) Next() (*Batch, error) {
	if it.err != nil {
		return nil, it.err
	}
	slot, ok := <-it.pending
	if !ok {
		it.err = io.EOF
		return nil, io.EOF
	}
	r := <-slot
	if r.err != nil {
		it.err = r.err
		it.cancel()
		return nil, r.err
	}
	return r.b, nil
}

// Close stops the workers and waits for them.
func (it *Iter) Close() {
	it.cancel()
	go func() {
		for range it.pending {
		}
	}()
	it.wg.Wait()
	if it.err == nil {
		it.err = errors.New("data: iterator closed")
	}
}

// batch loads the samples idx, which start at position pos of the epoch.
func (l *Loader) batch(ctx context.Context, epoch, pos int, idx []int) (*Batch, error) {
	o := l.opt
	n := len(idx)
	b := &Batch{
		Names:   make([]string, n),
		Left:    planar.New(n, 3, o.Height, o.Width),
		Right:   planar.New(n, 3, o.Height, o.Width),
		Flipped: make([]bool, n),
	}
	for _, k := range l.ds.Truth {
		m := planar.New(n, 1, o.Height, o.Width)
		switch k {
		case dataset.DispLeft:
			b.DispLeft = m
		case dataset.DispRight:
			b.DispRight = m
		case dataset.DepthLeft:
			b.DepthLeft = m
		case dataset.OccLeft:
			b.OccLeft = m
		case dataset.OccRight:
			b.OccRight = m
		}
	}
	for j, i := range idx {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		s, err := l.sample(i)
		if err != nil {
			return nil, err
		}
		if o.Augment != nil {
			r := rand.New(rand.NewPCG(o.Seed^augmentStream, uint64(epoch)<<32|uint64(pos+j)))
			o.Augment.apply(s, r)
		}
		b.Names[j] = s.Name
		b.Flipped[j] = s.Flipped
		put(b.Left, j, s.Left)
		put(b.Right, j, s.Right)
		put(b.DispLeft, j, s.DispLeft)
		put(b.DispRight, j, s.DispRight)
		put(b.DepthLeft, j, s.DepthLeft)
		put(b.OccLeft, j, s.OccLeft)
		put(b.OccRight, j, s.OccRight)
	}
	return b, nil
}

// put copies the single image src into item j of dst; a nil src leaves
// zeros, a nil dst does nothing.
func put(dst *planar.Image, j int, src *planar.Image) {
	if dst == nil || src == nil {
		return
	}
	copy(dst.Item(j).Pix, src.Pix)
}
