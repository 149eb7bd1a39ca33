package parallel

import (
	"sync"
	"sync/atomic"
	"testing"
)

// counts records how often each chunk ran.
type counts struct{ n []atomic.Int32 }

func (c *counts) Chunk(i int) { c.n[i].Add(1) }

func TestRunEveryChunkOnce(t *testing.T) {
	for _, tc := range []struct {
		name    string
		pool    *Pool
		chunks  int
		closing bool
	}{
		{"nil pool", nil, 7, false},
		{"zero pool", &Pool{}, 7, false},
		{"no helpers", New(0), 7, false},
		{"one chunk", New(3), 1, false},
		{"no chunks", New(3), 0, false},
		{"three helpers", New(3), 100, false},
		{"closed", New(3), 100, true},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if tc.closing {
				tc.pool.Close()
				tc.pool.Close()
			}
			c := &counts{n: make([]atomic.Int32, tc.chunks)}
			tc.pool.Run(c, tc.chunks)
			for i := range c.n {
				if got := c.n[i].Load(); got != 1 {
					t.Errorf("chunk %d ran %d times, want 1", i, got)
				}
			}
			tc.pool.Close()
		})
	}
}

// TestConcurrentRuns runs tasks from several goroutines on one pool.
func TestConcurrentRuns(t *testing.T) {
	p := New(2)
	defer p.Close()
	var wg sync.WaitGroup
	for g := range 6 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for r := range 50 {
				c := &counts{n: make([]atomic.Int32, 1+(g*7+r)%40)}
				p.Run(c, len(c.n))
				for i := range c.n {
					if got := c.n[i].Load(); got != 1 {
						t.Errorf("goroutine %d run %d: chunk %d ran %d times", g, r, i, got)
						return
					}
				}
			}
		}()
	}
	wg.Wait()
}

type nop struct{}

func (nop) Chunk(int) {}

func TestRunAllocatesNothing(t *testing.T) {
	p := New(1)
	defer p.Close()
	task := nop{}
	p.Run(task, 8)
	if a := testing.AllocsPerRun(100, func() { p.Run(task, 8) }); a != 0 {
		t.Errorf("Run allocates %v times a call, want 0", a)
	}
}
