package parallel

import (
	"context"
	"errors"
	"testing"
	"time"
)

// TestPool: a pool makes workers only while calls overlap and never more
// than its bound; past the bound Get waits for a Put or for its context.
func TestPool(t *testing.T) {
	type worker struct{ id int }
	made := 0
	newWorker := func() *worker { made++; return &worker{id: made} }
	p := NewPool[worker](2)
	ctx := context.Background()
	a, err := p.Get(ctx, newWorker)
	if err != nil || a.id != 1 {
		t.Fatalf("first Get: %v, %v", a, err)
	}
	p.Put(a)
	if b, err := p.Get(ctx, newWorker); err != nil || b != a || made != 1 {
		t.Fatalf("Get after Put: %v (%d made), %v; want the idle worker again", b, made, err)
	}
	c, err := p.Get(ctx, newWorker)
	if err != nil || c.id != 2 {
		t.Fatalf("second overlapping Get: %v, %v; want a second worker", c, err)
	}
	short, cancel := context.WithTimeout(ctx, 20*time.Millisecond)
	defer cancel()
	if d, err := p.Get(short, newWorker); !errors.Is(err, context.DeadlineExceeded) || d != nil || made != 2 {
		t.Fatalf("Get past the bound: %v, %v (%d made); want the context's error and no third worker", d, err, made)
	}
	if p.Add(&worker{id: 9}) {
		t.Error("Add past the bound succeeded")
	}
	go func() { time.Sleep(10 * time.Millisecond); p.Put(c) }()
	if d, err := p.Get(ctx, newWorker); err != nil || d != c {
		t.Errorf("Get waiting for a Put: %v, %v; want the worker put back", d, err)
	}
	if d, ok := p.TryGet(); ok {
		t.Errorf("TryGet with every worker out: %v", d)
	}
	p.Put(c)
	if d, ok := p.TryGet(); !ok || d != c {
		t.Errorf("TryGet with a worker idle: %v, %v", d, ok)
	}
	q := NewPool[worker](1)
	w := &worker{id: 7}
	if !q.Add(w) {
		t.Fatal("Add to an empty pool failed")
	}
	if got, err := q.Get(ctx, newWorker); err != nil || got != w || made != 2 {
		t.Errorf("Get after Add: %v, %v; want the added worker", got, err)
	}
}
