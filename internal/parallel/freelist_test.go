package parallel

import "testing"

func TestFreeList(t *testing.T) {
	type state struct {
		bound bool
		n     int
	}
	f := make(FreeList[state], 1)
	inits := 0
	init := func(s *state) { inits++; s.bound = true }
	a := f.Get(init)
	if !a.bound || inits != 1 {
		t.Fatalf("a new value: bound %v after %d inits; want init run once", a.bound, inits)
	}
	a.n = 7
	f.Put(a)
	f.Put(&state{n: 8}) // f is full: dropped
	if b := f.Get(init); b != a || b.n != 7 || inits != 1 {
		t.Errorf("Get after Put returned %p (n %d, %d inits); want the value put, %p, as it was", b, b.n, inits, a)
	}
	if c := f.Get(nil); c == a || c.bound || c.n != 0 {
		t.Errorf("Get on an empty list with no init returned %+v; want a new zero value", c)
	}
	allocs := testing.AllocsPerRun(100, func() { f.Put(f.Get(init)) })
	if allocs != 0 {
		t.Errorf("Get and Put of a recycled value allocated %v times; want 0", allocs)
	}
}
