package synth

import (
	"context"
	"fmt"
	"sync"
)

// forEachPair runs work(i) for i = 0 … n−1 on o.Workers goroutines,
// calling o.Progress after each success from one goroutine at a time. It
// stops handing out work at the first error, or when ctx is done, and
// returns once the pairs in progress have ended: the first error, or, if
// ctx ended before every pair was made, ctx's as "synth: stopped after D
// of N pairs: ...", D counting every pair that was made (those in progress
// at the stop included).
func forEachPair(ctx context.Context, n int, o Options, work func(i int) error) error {
	if err := ctx.Err(); err != nil {
		return fmt.Errorf("synth: stopped before the first of %d pairs: %w", n, err)
	}
	jobs := make(chan int)
	errs := make(chan error)
	stop := make(chan struct{})
	var wg sync.WaitGroup
	for k := 0; k < min(o.Workers, max(n, 1)); k++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range jobs {
				errs <- work(i)
			}
		}()
	}
	go func() {
		defer close(jobs)
		for i := 0; i < n; i++ {
			select {
			case jobs <- i:
			case <-stop:
				return
			case <-ctx.Done():
				return
			}
		}
	}()
	go func() {
		wg.Wait()
		close(errs)
	}()
	var first error
	done := 0
	for err := range errs { // until every worker has ended
		if err != nil {
			if first == nil {
				first = err
				close(stop)
			}
			continue
		}
		done++
		if o.Progress != nil && first == nil {
			o.Progress(done, n)
		}
	}
	if first == nil && done < n {
		first = fmt.Errorf("synth: stopped after %d of %d pairs: %w", done, n, ctx.Err())
	}
	return first
}
