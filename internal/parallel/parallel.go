// Package parallel runs the chunks of a loop on the calling goroutine and
// on idle helper goroutines, without allocating.
//
// A task is split into a number of chunks fixed by the task itself (by
// its shapes, never by the number of helpers), and each chunk is computed
// the same way whoever runs it, so results do not depend on how many
// goroutines took part. The caller always works too: with no idle helper
// (or a nil or closed Pool) it runs every chunk itself.
package parallel

import (
	"sync"
	"sync/atomic"
)

// Task is a loop split into chunks; Chunk(i) runs chunk i. Chunks of one
// Run may run concurrently and in any order, so they must write disjoint
// memory.
type Task interface {
	Chunk(i int)
}

// Pool holds helper goroutines that take chunks of the tasks run on it.
// It is safe for concurrent use: tasks run by several goroutines at once
// share the helpers. The zero Pool and a nil *Pool have no helpers.
type Pool struct {
	jobs    chan *job     // unbuffered: a send succeeds only when a helper is idle
	free    chan *job     // job records, reused
	quit    chan struct{} // closed by Close
	helpers int
	once    sync.Once
}

// job is one Run in progress.
type job struct {
	task Task
	n    int64
	next atomic.Int64
	done sync.WaitGroup
}

// New returns a Pool with the given number of helper goroutines (helpers
// ≤ 0 gives a Pool with none). Close stops them.
func New(helpers int) *Pool {
	helpers = max(helpers, 0)
	p := &Pool{
		jobs:    make(chan *job),
		free:    make(chan *job, helpers+1),
		quit:    make(chan struct{}),
		helpers: helpers,
	}
	for range helpers {
		go p.help()
	}
	return p
}

// Helpers returns the number of helper goroutines of p.
func (p *Pool) Helpers() int {
	if p == nil {
		return 0
	}
	return p.helpers
}

func (p *Pool) help() {
	for {
		select {
		case j := <-p.jobs:
			j.work()
			j.done.Done()
		case <-p.quit:
			return
		}
	}
}

// Close stops the helpers once they finish the chunks they hold. Tasks
// run after Close run on the calling goroutine alone. Close may be called
// more than once.
func (p *Pool) Close() {
	if p == nil || p.quit == nil {
		return
	}
	p.once.Do(func() { close(p.quit) })
}

// Run runs chunks 0, …, n−1 of t and returns when all are done. Idle
// helpers join in; the caller works until no chunk is left.
func (p *Pool) Run(t Task, n int) {
	if n <= 0 {
		return
	}
	if n == 1 || p.Helpers() == 0 {
		for i := range n {
			t.Chunk(i)
		}
		return
	}
	var j *job
	select {
	case j = <-p.free:
	default:
		j = new(job) // only until the pool holds one record per concurrent Run
	}
	j.task, j.n = t, int64(n)
	j.next.Store(0)
	p.offer(j, min(p.helpers, n-1))
	j.work()
	j.done.Wait()
	j.task = nil
	select {
	case p.free <- j:
	default:
	}
}

// offer hands j to at most k idle helpers. A closed pool has none.
func (p *Pool) offer(j *job, k int) {
	for range k {
		j.done.Add(1)
		select {
		case p.jobs <- j:
		default:
			j.done.Done()
			return
		}
	}
}

// work runs chunks of j until none is left.
func (j *job) work() {
	for {
		i := j.next.Add(1) - 1
		if i >= j.n {
			return
		}
		j.task.Chunk(int(i))
	}
}
