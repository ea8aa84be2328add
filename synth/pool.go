package synth

import (
	"context"
	"fmt"
	"sync"
)

// forEachPair runs work(i) for i = 0 … n−1 on o.Workers goroutines,
// calling o.Progress after each success from one goroutine at a time. It
// stops handing out work at the first error, or when ctx is done, and
// returns once the pairs in progress have ended: the first error, or ctx's
// as "synth: stopped after D of N pairs: ...".
func forEachPair(ctx context.Context, n int, o Options, work func(i int) error) error {
	if err := ctx.Err(); err != nil {
		return fmt.Errorf("synth: stopped before the first of %d pairs: %w", n, err)
	}
	jobs := make(chan int)
	errs := make(chan error)
	var wg sync.WaitGroup
	stop := make(chan struct{})
	for k := 0; k < min(o.Workers, max(n, 1)); k++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range jobs {
				err := work(i)
				select {
				case errs <- err:
				case <-stop:
					return
				}
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
	var first error
collect:
	for done := 0; done < n; done++ {
		select {
		case err := <-errs:
			if err != nil {
				first = err
				break collect
			}
		case <-ctx.Done():
			first = fmt.Errorf("synth: stopped after %d of %d pairs: %w", done, n, ctx.Err())
			break collect
		}
		if o.Progress != nil {
			o.Progress(done+1, n)
		}
	}
	close(stop)
	wg.Wait()
	return first
}
