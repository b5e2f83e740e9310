package criteria

import (
	"errors"
	"math"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"github.com/kgauge/kgauge/internal/kmeans"
)

// TestPoolAcquireGoesFirst checks that a caller waiting in acquire gets the next free slot
// before a queued job does, even when the job was queued (and a worker was waiting for a slot)
// first: the main fit path must not queue behind the gap's reference paths.
func TestPoolAcquireGoesFirst(t *testing.T) {
	for trial := range 50 { // who wakes first is up to the runtime: try many times
		p := newPool(1, func() bool { return false }, nil)
		p.acquire() // the one slot
		var mu sync.Mutex
		var order []string
		note := func(s string) {
			mu.Lock()
			order = append(order, s)
			mu.Unlock()
		}
		p.add(job{cost: 1, run: func() { note("job") }})
		time.Sleep(time.Millisecond) // let the worker wait for the slot
		done := make(chan struct{})
		go func() {
			p.acquire()
			note("acquire")
			p.release()
			close(done)
		}()
		for waiting := false; !waiting; {
			p.mu.Lock()
			waiting = p.urgent == 1
			p.mu.Unlock()
			time.Sleep(100 * time.Microsecond)
		}
		p.release()
		<-done
		p.wait()
		if len(order) != 2 || order[0] != "acquire" {
			t.Fatalf("trial %d: order %v, want the waiting acquire before the queued job", trial, order)
		}
	}
}

// TestPoolBoundsRunning checks that the jobs running, and the callers holding slots through
// acquire or tryAcquire, never outnumber the pool's workers, and that every job runs.
func TestPoolBoundsRunning(t *testing.T) {
	const workers = 3
	p := newPool(workers, func() bool { return false }, nil)
	var running, most, ran atomic.Int32
	enter := func() {
		n := running.Add(1)
		for {
			m := most.Load()
			if n <= m || most.CompareAndSwap(m, n) {
				break
			}
		}
		time.Sleep(200 * time.Microsecond)
		running.Add(-1)
	}
	for range 60 {
		p.add(job{cost: 1, run: func() { enter(); ran.Add(1) }})
	}
	var wg sync.WaitGroup
	for range 4 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for range 20 {
				if p.tryAcquire() {
					enter()
					p.release()
				}
				p.acquire()
				enter()
				p.release()
			}
		}()
	}
	wg.Wait()
	p.wait()
	if most.Load() > workers {
		t.Errorf("%d at once, want at most %d", most.Load(), workers)
	}
	if ran.Load() != 60 {
		t.Errorf("%d jobs ran, want 60", ran.Load())
	}
}

// TestEMStop checks that GMMOptions.stop ends both EMs: the full-covariance one with
// errEMStopped, the spherical one with a NaN log-likelihood, and fitMixture with errEMStopped
// for either family; without it the same fits succeed.
func TestEMStop(t *testing.T) {
	p := readSet(t, "s1.txt")
	fit := kmeans.Fit(p, 15, kmeans.FitOptions{Restarts: 1, Rand: rngFor(1, 15, streamFit)})
	stopAfter := func(n int) func() bool {
		calls := 0
		return func() bool { calls++; return calls > n }
	}
	opt := GMMOptions{Reg: 1e-6, MaxIter: 20, Tol: 1e-12}
	if _, ll, _, _, err := gmmFullFit(p, fit, opt); err != nil || math.IsNaN(ll) {
		t.Fatalf("full EM without stop: ll %v, err %v", ll, err)
	}
	opt.stop = stopAfter(2)
	if _, _, _, iters, err := gmmFullFit(p, fit, opt); !errors.Is(err, errEMStopped) || iters != 2 {
		t.Errorf("full EM stopped after 2 iterations: %d iterations, err %v; want 2, errEMStopped", iters, err)
	}
	opt.stop, opt.Spherical = stopAfter(2), true
	if _, ll, _, iters := gmmFit(p, fit, opt); !math.IsNaN(ll) || iters != 2 {
		t.Errorf("spherical EM stopped after 2 iterations: ll %v after %d, want NaN after 2", ll, iters)
	}
	for _, f := range []MixtureFamily{FamilyFull, FamilySpherical} {
		if _, _, err := fitMixture(f, p, fit, 1e-6, nil, func() bool { return true }); !errors.Is(err, errEMStopped) {
			t.Errorf("%s: fitMixture with stop: err %v, want errEMStopped", f, err)
		}
		if ll, _, err := fitMixture(f, p, fit, 1e-6, nil, nil); err != nil || math.IsNaN(ll) {
			t.Errorf("%s: fitMixture: ll %v, err %v", f, ll, err)
		}
	}
}
