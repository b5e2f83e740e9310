package kmeans

import (
	"math"
	"math/rand/v2"
	"reflect"
	"testing"
)

// warmCase returns loose groups of points (some on a grid, so that exact ties between centres
// occur) and a k-means fit of them from k-means++.
func warmCase(seed uint64, n, d, k int, grid bool) (Data, Result) {
	rng := rand.New(rand.NewPCG(seed, 7))
	x := make([]float64, n*d)
	w := make([]float64, n)
	for i := range n {
		for t := range d {
			v := rng.NormFloat64() + float64(3*(i%k))
			if grid {
				v = math.Round(v)
			}
			x[i*d+t] = v
		}
		w[i] = 0.5 + rng.Float64()
	}
	p := Data{X: x, W: w, D: d}
	return p, Lloyd(p, PlusPlus(p, k, rng, nil), LloydOptions{})
}

// fullLabels is the full first assignment of Lloyd: every point against every centre.
func fullLabels(p Data, c []float64) []int32 {
	k := len(c) / p.D
	h := newHamerly(p, k)
	labels := make([]int32, p.Len())
	h.assign(c, labels, true)
	return labels
}

// TestAssignWarmMatchesFull checks that a warm first assignment gives the full assignment's labels
// and valid bounds (upper = the distance to the label, lower <= the distance to every other
// centre) for the three starts fitPath builds: the fit plus one centre (upward sweep), two
// centres merged (downward sweep), and the fit itself (a race's run on); with the fit's bounds as
// they are, loosened, and zero (then only the half-distance test lets a point skip the scan).
func TestAssignWarmMatchesFull(t *testing.T) {
	warmPoints := 0
	for _, tc := range []struct {
		seed    uint64
		n, d, k int
		grid    bool
	}{{1, 400, 2, 6, false}, {2, 600, 16, 12, false}, {3, 500, 3, 9, true}, {4, 300, 1, 5, true}, {5, 800, 5, 25, false}} {
		p, f := warmCase(tc.seed, tc.n, tc.d, tc.k, tc.grid)
		d, k := p.D, f.K
		type start struct {
			name string
			c    []float64
			w    Warm
		}
		added := append(append([]float64(nil), f.Centres...), p.Point(tc.n/3)...)
		// merge the centres 1 and k-2 into their mean, in place of centre 1
		a, b := 1, k-2
		merged := make([]float64, 0, (k-1)*d)
		for j := range k {
			switch j {
			case a:
				for s := range d {
					merged = append(merged, (f.Centres[a*d+s]+f.Centres[b*d+s])/2)
				}
			case b:
			default:
				merged = append(merged, f.Centres[j*d:(j+1)*d]...)
			}
		}
		starts := []start{
			{"added", added, *f.WarmAdded()},
			{"merged", merged, *f.WarmMerged(a, b)},
			{"same", f.Centres, *f.WarmSame()},
		}
		for _, s := range starts {
			for _, scale := range []float64{1, 0.5, 0} {
				lower := make([]float64, tc.n)
				for i, v := range s.w.Lower {
					lower[i] = scale * v
				}
				w := s.w
				w.Lower = lower
				kk := len(s.c) / d
				h := newHamerly(p, kk)
				labels := make([]int32, tc.n)
				if got := h.assignWarm(s.c, labels, &w); got != tc.n {
					t.Fatalf("%s: assignWarm reports %d changes, want %d (all, as a full assignment)", s.name, got, tc.n)
				}
				if want := fullLabels(p, s.c); !reflect.DeepEqual(labels, want) {
					t.Fatalf("seed %d %s scale %v: warm labels differ from the full assignment's", tc.seed, s.name, scale)
				}
				for i := range labels {
					x := p.Point(i)
					if u := math.Sqrt(scanDist2(x, s.c, int(labels[i]), kk, d)); h.upper[i] != u {
						t.Fatalf("%s: point %d: upper %v, distance %v", s.name, i, h.upper[i], u)
					}
					for j := range kk {
						if j != int(labels[i]) && h.lower[i] > math.Sqrt(Dist2(x, s.c[j*d:(j+1)*d]))*(1+1e-12) {
							t.Fatalf("%s: point %d: lower %v above the distance to centre %d", s.name, i, h.lower[i], j)
						}
					}
				}
				checkHeld(t, h, p, labels, "assignWarm")
				warmPoints++
			}
		}
	}
	if warmPoints == 0 {
		t.Fatal("no case ran")
	}
}

// TestLloydWarmSameResult checks that Lloyd from a start gives the same Result with and without
// its Warm description (Lower aside, a bound that may differ).
func TestLloydWarmSameResult(t *testing.T) {
	for seed := uint64(1); seed <= 6; seed++ {
		p, f := warmCase(seed, 700, 4, 8, seed%2 == 0)
		c := append(append([]float64(nil), f.Centres...), p.Point(int(seed)*37)...)
		cold := Lloyd(p, c, LloydOptions{})
		warm := Lloyd(p, c, LloydOptions{Warm: f.WarmAdded()})
		cold.Lower, warm.Lower = nil, nil
		if !reflect.DeepEqual(cold, warm) {
			t.Fatalf("seed %d: warm Lloyd differs: cost %v vs %v, iterations %d vs %d", seed, warm.Cost, cold.Cost, warm.Iters, cold.Iters)
		}
	}
}

// TestLloydWarmChecked checks that a Warm that does not fit the points or the start panics with
// the package's message rather than reading out of range.
func TestLloydWarmChecked(t *testing.T) {
	p, f := warmCase(1, 50, 2, 3, false)
	for name, w := range map[string]*Warm{
		"short labels": {Labels: f.Labels[1:], Lower: f.Lower},
		"fresh beyond": {Labels: f.Labels, Lower: f.Lower, Fresh: []int{3}},
	} {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("%s: no panic", name)
				}
			}()
			Lloyd(p, f.Centres, LloydOptions{Warm: w})
		}()
	}
}

// TestAssignWarmTies checks the ties a warm assignment must settle as the full one does (the lower
// index wins): a fresh centre at the same distance as a point's old centre, and an old label that
// is not the lowest-indexed of two old centres at the same distance (a label Lloyd's bounds may
// keep), with a lower bound equal to the distance.
func TestAssignWarmTies(t *testing.T) {
	x := []float64{3, 5, 7, 9, 1, 11}
	p := Data{X: x, D: 1}
	for _, tc := range []struct {
		name    string
		centres []float64
		w       Warm
	}{
		// centre 1 is fresh and sits on centre 3: the points of centre 3 tie between them
		{"fresh copy", []float64{2, 10, 6, 10}, Warm{Labels: []int32{0, 2, 2, 3, 0, 3}, Lower: []float64{1, 1, 1, 1, 1, 1}, Fresh: []int{1}}},
		// 3 is as far from 2 as from 4; 5 as far from 4 as from 6: the labels name the upper one
		{"old tie", []float64{2, 4, 6, 20}, Warm{Labels: []int32{1, 2, 2, 2, 0, 2}, Lower: []float64{1, 1, 3, 5, 3, 7}}},
	} {
		want := fullLabels(p, tc.centres)
		h := newHamerly(p, len(tc.centres))
		got := make([]int32, len(x))
		h.assignWarm(tc.centres, got, &tc.w)
		if !reflect.DeepEqual(got, want) {
			t.Errorf("%s: warm labels %v, full %v", tc.name, got, want)
		}
	}
}

// TestFitIgnoresWarm checks that a Warm left in FitOptions.Lloyd, which describes one start and
// not Fit's seedings, changes nothing: Fit gives the same Result with and without it.
func TestFitIgnoresWarm(t *testing.T) {
	p, f := warmCase(2, 500, 3, 6, false)
	lying := &Warm{Labels: make([]int32, p.Len()), Lower: make([]float64, p.Len())}
	for i := range lying.Lower {
		lying.Lower[i] = math.Inf(1) // every point would keep centre 0
	}
	want := Fit(p, f.K, FitOptions{Restarts: 3})
	got := Fit(p, f.K, FitOptions{Restarts: 3, Lloyd: LloydOptions{Warm: lying}})
	if !reflect.DeepEqual(got, want) {
		t.Fatalf("Fit with a Warm in its Lloyd options: cost %v, without %v", got.Cost, want.Cost)
	}
}
