package synth

import "sync"

// forEachPair runs work(i) for i = 0 … n−1 on o.Workers goroutines,
// calling o.Progress after each success from one goroutine at a time. It
// stops handing out work at the first error and returns it.
func forEachPair(n int, o Options, work func(i int) error) error {
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
			}
		}
	}()
	var first error
	for done := 0; done < n; done++ {
		err := <-errs
		if err != nil {
			first = err
			break
		}
		if o.Progress != nil {
			o.Progress(done+1, n)
		}
	}
	close(stop)
	wg.Wait()
	return first
}
