package synth

import (
	"math"
	"slices"
	"testing"
)

// smallLoads returns demo options small enough for unit tests.
func smallLoads(rows int) LoadOptions {
	o := DefaultLoadOptions()
	o.Rows = rows
	return o
}

func TestLoadsReproducible(t *testing.T) {
	o := smallLoads(3000)
	o.NullShare = 0.05
	o.Partitions = 2
	x1, l1 := Loads(o, 0)
	x2, l2 := Loads(o, 0)
	if i := sameFloats(x1, x2); i >= 0 {
		t.Fatalf("same options differ at value %d", i)
	}
	if !slices.Equal(l1, l2) {
		t.Fatal("same options give different labels")
	}
	o2 := o
	o2.Seed++
	x3, _ := Loads(o2, 0)
	if sameFloats(x1, x3) < 0 {
		t.Error("a different seed gives the same values")
	}
	x4, l4 := Loads(o, 1)
	if sameFloats(x1, x4) < 0 {
		t.Error("partition 1 repeats partition 0")
	}
	if !slices.Equal(l1, l4) {
		t.Error("a household's archetype changed between days without a heat wave")
	}
	for i, v := range x1 {
		if !math.IsNaN(v) && float64(float32(v)) != v {
			t.Fatalf("value %d = %v is not float32-representable", i, v)
		}
	}
}

func TestLoadsShares(t *testing.T) {
	for _, tc := range []struct {
		name     string
		arch     int
		shares   []float64
		heatWave float64
	}{
		{"Default5", 5, nil, 0},
		{"Default6HeatWave", 6, nil, 0.2},
		{"Custom3", 3, []float64{1, 2, 7}, 0},
		{"One", 1, nil, 0.5},
		{"ZeroShare", 4, []float64{1, 0, 1, 2}, 0.1},
	} {
		t.Run(tc.name, func(t *testing.T) {
			o := smallLoads(20_000)
			o.Archetypes, o.Shares, o.HeatWave = tc.arch, tc.shares, tc.heatWave
			_, labels := Loads(o, 0)
			shares := tc.shares
			if shares == nil {
				shares = DefaultShares()[:tc.arch]
			}
			sum := 0.0
			for _, s := range shares {
				sum += s
			}
			want := make([]float64, numArchetypes)
			for i, s := range shares {
				want[i] = (1 - tc.heatWave) * s / sum
			}
			want[AirConditioning] = tc.heatWave
			got := counts(labels, numArchetypes)
			for a := range numArchetypes {
				share := float64(got[a]) / float64(len(labels))
				if math.Abs(share-want[a]) > 0.005 || (want[a] == 0) != (got[a] == 0) {
					t.Errorf("%s: share %.4f, want %.4f", archetypeNames[a], share, want[a])
				}
			}
		})
	}
}

func TestLoadsNullShare(t *testing.T) {
	for _, share := range []float64{0, 0.01, 0.2, 1} {
		o := smallLoads(20_000)
		o.NullShare = share
		x, _ := Loads(o, 0)
		withNull := 0
		for i := range o.Rows {
			row := x[i*Hours : (i+1)*Hours]
			first, last, n := -1, -1, 0
			for h, v := range row {
				if math.IsNaN(v) {
					if first < 0 {
						first = h
					}
					last = h
					n++
				}
			}
			if n == 0 {
				continue
			}
			withNull++
			if n > 6 || last-first+1 != n {
				t.Fatalf("share %v: row %d has %d null hours in %d..%d, want 1-6 consecutive", share, i, n, first, last)
			}
		}
		got := float64(withNull) / float64(o.Rows)
		tol := 4*math.Sqrt(share*(1-share)/float64(o.Rows)) + 1e-9
		if math.Abs(got-share) > tol {
			t.Errorf("share %v: %.4f of rows have an outage (tolerance %.4f)", share, got, tol)
		}
	}
}

// meanCurves returns the mean profile of each archetype, skipping null hours.
func meanCurves(x []float64, labels []int) [numArchetypes][Hours]float64 {
	var sum, n [numArchetypes][Hours]float64
	for i, a := range labels {
		for h := range Hours {
			if v := x[i*Hours+h]; !math.IsNaN(v) {
				sum[a][h] += v
				n[a][h]++
			}
		}
	}
	for a := range sum {
		for h := range Hours {
			sum[a][h] /= n[a][h]
		}
	}
	return sum
}

// span returns the max, min and mean of c over hours from..to inclusive.
func span(c [Hours]float64, from, to int) (hi, lo, mean float64) {
	hi, lo = math.Inf(-1), math.Inf(1)
	for h := from; h <= to; h++ {
		hi, lo = math.Max(hi, c[h]), math.Min(lo, c[h])
		mean += c[h] / float64(to-from+1)
	}
	return hi, lo, mean
}

// argmax returns the hour of the largest value of c.
func argmax(c [Hours]float64) int {
	best := 0
	for h := range c {
		if c[h] > c[best] {
			best = h
		}
	}
	return best
}

// TestArchetypeFeatures checks the recognisable features that SCENARIO.md asks of each
// archetype on the mean curves of generated data (default noise and household spread).
func TestArchetypeFeatures(t *testing.T) {
	o := smallLoads(30_000)
	o.Archetypes, o.HeatWave = 6, 0.15
	x, labels := Loads(o, 0)
	m := meanCurves(x, labels)
	check := func(name string, ok bool, c [Hours]float64) {
		t.Helper()
		if !ok {
			t.Errorf("%s: mean curve %.2f", name, c)
		}
	}

	c := m[Commuter]
	morning, _, _ := span(c, 6, 8)
	evening, _, _ := span(c, 18, 20)
	_, _, midday := span(c, 10, 15)
	check("commuters: evening peak > morning bump > midday", evening > 1.3*morning && morning > 1.5*midday, c)
	check("commuters: peak hour 18-20", argmax(c) >= 18 && argmax(c) <= 20, c)

	c = m[HomeWorker]
	dayHi, dayLo, _ := span(c, 9, 16)
	_, _, night := span(c, 1, 4)
	check("home workers: broad daytime plateau", dayLo > 0.6*dayHi && dayLo > 2.5*night, c)

	c = m[NightStorage]
	_, nightLo, _ := span(c, 0, 5)
	restHi, _, _ := span(c, 7, 22)
	check("night storage: 00-06 heavier than any later hour", nightLo > 2*restHi && nightLo > 1.5, c)

	c = m[RooftopSolar]
	noonHi, _, _ := span(c, 10, 14)
	_, nightLo, _ = span(c, 1, 4)
	check("rooftop solar: negative 10-14, positive at night", noonHi < 0 && nightLo > 0, c)

	c = m[EVCharging]
	spike, _, _ := span(c, 21, 23)
	before, _, _ := span(c, 0, 20)
	check("EV: tall late-evening spike", argmax(c) >= 21 && spike > 2*before, c)

	c = m[SmallShop]
	openHi, openLo, openMean := span(c, 9, 16)
	nightHi, _, _ := span(c, 20, 23)
	earlyHi, _, _ := span(c, 0, 5)
	check("shops: flat while open", openLo > 0.85*openHi && openMean > 0.8, c)
	check("shops: near zero at night", math.Max(nightHi, earlyHi) < 0.15*openMean, c)

	c = m[AirConditioning]
	peak, _, _ := span(c, 13, 17)
	morningHi, _, _ := span(c, 0, 11)
	eveningHi, _, _ := span(c, 19, 23)
	check("air conditioning: afternoon peak", argmax(c) >= 13 && argmax(c) <= 17 &&
		peak > 1.5*math.Max(morningHi, eveningHi), c)
	check("air conditioning: afternoon above commuters", m[AirConditioning][15] > 3*m[Commuter][15], c)
}

// nearestMeanError returns the share of complete rows closer to another archetype's
// empirical mean curve than to their own.
func nearestMeanError(x []float64, labels []int) float64 {
	m := meanCurves(x, labels)
	wrong, n := 0, 0
rows:
	for i, a := range labels {
		row := x[i*Hours : (i+1)*Hours]
		for _, v := range row {
			if math.IsNaN(v) {
				continue rows
			}
		}
		n++
		best, bestD := -1, math.Inf(1)
		for b := range m {
			if math.IsNaN(m[b][0]) {
				continue
			}
			d := 0.0
			for h, v := range row {
				d += (v - m[b][h]) * (v - m[b][h])
			}
			if d < bestD {
				best, bestD = b, d
			}
		}
		if best != a {
			wrong++
		}
	}
	return float64(wrong) / float64(n)
}

// TestLoadsSeparability checks that the default archetypes are separable but overlap a
// little, and that more noise makes them overlap more.
func TestLoadsSeparability(t *testing.T) {
	o := smallLoads(20_000)
	x, l := Loads(o, 0)
	def := nearestMeanError(x, l)
	o.Noise = 0.5
	x, l = Loads(o, 0)
	noisy := nearestMeanError(x, l)
	if !(def > 0 && def < 0.03) {
		t.Errorf("default noise: %.4f of rows nearer another archetype, want (0, 0.03)", def)
	}
	if !(noisy > 2*def) {
		t.Errorf("noise 0.5: error %.4f, want more than twice the default %.4f", noisy, def)
	}
}

func TestLoadsSortedGroupsLabels(t *testing.T) {
	o := smallLoads(5000)
	o.Archetypes, o.HeatWave, o.Order = 6, 0.1, Sorted
	xs, ls := Loads(o, 0)
	if !contiguous(ls) {
		t.Fatal("Sorted order does not group archetypes")
	}
	o.Order = Shuffled
	xh, lh := Loads(o, 0)
	if contiguous(lh) {
		t.Fatal("Shuffled order groups archetypes")
	}
	// The shuffled rows are the sorted rows in another order: row r is household home(r).
	g, err := newLoadGen(o)
	if err != nil {
		t.Fatal(err)
	}
	for r := range o.Rows {
		h := g.home(r)
		if lh[r] != ls[h] || sameFloats(xh[r*Hours:(r+1)*Hours], xs[h*Hours:(h+1)*Hours]) >= 0 {
			t.Fatalf("shuffled row %d differs from household %d of the sorted file", r, h)
		}
	}
}

func TestMeanCurveMatchesTable(t *testing.T) {
	for a := range numArchetypes {
		for i := range 24 * 10 {
			tt := float64(i)/10 + 0.03
			if d := math.Abs(curveAt(a, tt) - curve(a, tt)); d > 1e-3 {
				t.Fatalf("%s at %.2f h: table off by %.2g kWh", archetypeNames[a], tt, d)
			}
		}
	}
	if got := len(ArchetypeNames()); got != 7 {
		t.Errorf("ArchetypeNames has %d names, want 7", got)
	}
}
