package criteria

import (
	"sync"
)

// Expected costs of Evaluate's units of work, in "point x centre x dimension" products (one
// squared distance per dimension is one unit). They order the jobs (the most expensive first, so
// both cores finish together) and weigh the progress reports; they do not change any result.
// The factors were read off a CPU profile of BenchmarkCriteriaStage/d=16/maxk=20 (DEVELOPERS.md,
// "Criteria stage, round 2"): about 20 Lloyd iterations per k-means++ restart, 6 sweep starts
// per k of about 10 iterations each, about 10 passes of k D^2 per point for the mixture's EM,
// and a silhouette that measures about half of every anchor's distances.
const (
	costRestart   = 20 // Lloyd iterations of one k-means++ restart
	costSweep     = 60 // Lloyd iterations of the sweeps at one k (both directions)
	costGapSweep  = 200
	costGMMPasses = 10
)

// restartCost is the expected cost of the restarts of fitPath at k.
func restartCost(n, k, d, restarts int) float64 {
	return float64(costRestart*restarts) * float64(n) * float64(k) * float64(d)
}

// sweepCost is the expected cost of the sweeps of fitPath at k.
func sweepCost(n, k, d int) float64 {
	return costSweep * float64(n) * float64(k) * float64(d)
}

// gapPathCost is the expected cost of one gap reference fitPath over lo..hi on n points (one
// restart at each end of the range, gapRefEnds; on uniform references the sweeps run both rounds
// and converge slowly).
func gapPathCost(n, lo, hi, d int) float64 {
	c := 0.0
	for k := lo; k <= hi; k++ {
		units := float64(costGapSweep)
		if k == lo || k == hi || !gapRefEnds {
			units += costRestart
		}
		c += units * float64(n) * float64(k) * float64(d)
	}
	return c
}

// mixtureCost is the expected cost of one mixture family's EM at k.
func mixtureCost(n, k, d int) float64 {
	return costGMMPasses * float64(n) * float64(k) * float64(d) * float64(d)
}

// scoreCost is the expected cost of scoreK at k: the anchor silhouette and the indices, plus the
// split halves' two fits; at k = 1 the Student t's ECME instead, which runs most of its
// gmmMaxIter iterations, each a Mahalanobis distance and an outer product per point (about
// d^2 / 2 each) plus about 48 d of other work (measured: 83 ms at 16 columns, 350 ms at 64, on
// the 16,384-point coreset). Costed at zero it ran last, alone on one core for 0.35 s at 64
// columns (DEVELOPERS.md, issue 15, "Criteria stage, round 11").
func scoreCost(n, k, d, anchors, split int) float64 {
	c := 0.0
	if k == 1 {
		c += float64(gmmMaxIter) * float64(n) * float64(d) * float64(d+48)
	}
	if k >= 2 {
		c += 0.5*float64(anchors)*float64(n)*float64(d) + 3*float64(n)*float64(k)*float64(d)
		c += 2 * restartCost(split, k, d, 2)
	}
	return c
}

// progress reports finished work to Options.Progress: done never decreases, never exceeds
// total, and calls never overlap (they are made under a mutex).
type progress struct {
	mu          sync.Mutex
	fn          func(done, total float64)
	done, total float64
}

// newProgress returns a progress with the given total; nil when fn is nil (every method is a
// no-op on nil).
func newProgress(fn func(done, total float64), total float64) *progress {
	if fn == nil {
		return nil
	}
	return &progress{fn: fn, total: total}
}

// add reports w more units done.
func (p *progress) add(w float64) {
	if p == nil || !(w > 0) {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	p.done = min(p.done+w, p.total)
	p.fn(p.done, p.total)
}

// finish reports the whole total done (once; later calls do nothing).
func (p *progress) finish() {
	if p == nil {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.done < p.total {
		p.done = p.total
		p.fn(p.done, p.total)
	}
}

// job is one unit of Evaluate's work with its expected cost. The pool orders jobs by rank when
// it is set, else by cost (Evaluate ranks each mixture job by the cost of the mixtures from its k
// up, so that the smallest k run first).
type job struct {
	cost float64
	rank float64
	run  func()
}

// order is the cost the pool orders j by.
func (j job) order() float64 {
	if j.rank > 0 {
		return j.rank
	}
	return j.cost
}

// pool runs jobs on a fixed number of goroutines, taking the most expensive queued job first
// (job.order; the first queued among equals); jobs may be queued while it runs. Every running job, and
// every caller that takes a slot with acquire or tryAcquire, holds one of the pool's slots, so no
// more than its number of workers run at once. A caller waiting in acquire goes before the
// queued jobs: the main fit path, on which the per-k jobs wait, is never kept behind the gap's
// reference paths, which fill the slots it leaves. Once stop reports true, queued jobs are
// dropped.
type pool struct {
	mu     sync.Mutex
	cond   *sync.Cond
	queue  []job
	closed bool
	free   int // slots nobody holds
	urgent int // callers waiting in acquire
	wg     sync.WaitGroup
	stop   func() bool
	prog   *progress
}

func newPool(workers int, stop func() bool, prog *progress) *pool {
	workers = max(workers, 1)
	p := &pool{free: workers, stop: stop, prog: prog}
	p.cond = sync.NewCond(&p.mu)
	for w := 0; w < workers; w++ {
		p.wg.Add(1)
		go p.work()
	}
	return p
}

// acquire takes a slot, blocking until one is free, ahead of the queued jobs; release gives it
// back.
func (p *pool) acquire() {
	p.mu.Lock()
	p.urgent++
	for p.free == 0 {
		p.cond.Wait()
	}
	p.urgent--
	p.free--
	p.mu.Unlock()
}

// tryAcquire takes a slot if one is free now and reports whether it did.
func (p *pool) tryAcquire() bool {
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.free == 0 {
		return false
	}
	p.free--
	return true
}

func (p *pool) release() {
	p.mu.Lock()
	p.free++
	p.mu.Unlock()
	p.cond.Broadcast()
}

// add queues jobs.
func (p *pool) add(jobs ...job) {
	p.mu.Lock()
	p.queue = append(p.queue, jobs...)
	p.mu.Unlock()
	p.cond.Broadcast()
}

// wait closes the queue and returns when every queued job has run (or been dropped).
func (p *pool) wait() {
	p.mu.Lock()
	p.closed = true
	p.mu.Unlock()
	p.cond.Broadcast()
	p.wg.Wait()
}

// work runs queued jobs: it takes a free slot when no caller waits in acquire, then the job
// ranked first at that moment.
func (p *pool) work() {
	defer p.wg.Done()
	for {
		p.mu.Lock()
		for !(p.closed && len(p.queue) == 0) && (len(p.queue) == 0 || p.free == 0 || p.urgent > 0) {
			p.cond.Wait()
		}
		if len(p.queue) == 0 {
			p.mu.Unlock()
			return
		}
		p.free--
		best := 0
		for i, j := range p.queue {
			if j.order() > p.queue[best].order() {
				best = i
			}
		}
		j := p.queue[best]
		p.queue = append(p.queue[:best], p.queue[best+1:]...)
		p.mu.Unlock()
		if p.stop() {
			p.release()
			continue
		}
		j.run()
		p.release()
		p.prog.add(j.cost)
	}
}
