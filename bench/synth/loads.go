package synth

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strconv"
	"time"
)

// Archetype indices, in the order of [ArchetypeNames]. Labels returned by [Loads] are
// these indices.
const (
	Commuter = iota
	HomeWorker
	NightStorage
	RooftopSolar
	EVCharging
	SmallShop
	AirConditioning // only on a heat-wave day (LoadOptions.HeatWave > 0)
	numArchetypes
)

// Hours is the number of hourly columns (h00..h23) of a load profile.
const Hours = 24

var archetypeNames = [numArchetypes]string{
	"commuters", "home-workers", "night-storage", "rooftop-solar", "ev-charging", "small-shops",
	"air-conditioning",
}

// ArchetypeNames lists the names of the seven archetypes: the six of a normal day, in
// the order LoadOptions.Archetypes counts them, then the heat-wave archetype.
func ArchetypeNames() []string {
	return append([]string(nil), archetypeNames[:]...)
}

// tariffNames lists the values of the tariff column.
var tariffNames = [3]string{"flat", "time-of-use", "prepaid"}

// tariffOdds is the cumulative probability of flat and time-of-use per archetype (the
// rest is prepaid): heaters and EV owners favour time-of-use, shops a flat rate.
var tariffOdds = [numArchetypes][2]float64{
	{0.60, 0.85}, {0.60, 0.90}, {0.15, 0.95}, {0.45, 0.95}, {0.20, 0.95}, {0.80, 0.95}, {0.60, 0.90},
}

// circ wraps an hour difference into [-12, 12).
func circ(d float64) float64 {
	d = math.Mod(d+12, 24)
	if d < 0 {
		d += 24
	}
	return d - 12
}

// bump is a bell of height 1 centred at c with width w hours (on the 24-hour circle).
func bump(t, c, w float64) float64 {
	d := circ(t-c) / w
	return math.Exp(-0.5 * d * d)
}

// block is about 1 between hours from and to (on the circle) with soft edges of width w.
func block(t, from, to, w float64) float64 {
	half := circ(to-from) / 2
	if half <= 0 {
		half += 12
	}
	d := circ(t - (from + half))
	return 1 / ((1 + math.Exp(-(d+half)/w)) * (1 + math.Exp((d-half)/w)))
}

// curve returns the typical net energy (kWh) archetype a draws in the hour around t.
func curve(a int, t float64) float64 {
	switch a {
	case Commuter: // out all day: breakfast bump, larger evening peak
		return 0.22 + 0.55*bump(t, 7, 0.8) + 1.15*bump(t, 19, 1.4)
	case HomeWorker: // broad daytime plateau with lunch and a modest evening
		return 0.22 + 0.55*block(t, 8, 18, 0.5) + 0.25*bump(t, 12.5, 0.7) + 0.5*bump(t, 19.5, 1.3)
	case NightStorage: // storage heaters charging on the night tariff, 00:00-06:00
		return 0.25 + 2.1*block(t, 0, 6, 0.25) + 0.45*bump(t, 18.5, 1.5)
	case RooftopSolar: // a household whose panels export around midday
		return 0.25 + 0.45*bump(t, 7.5, 0.9) + 0.95*bump(t, 19, 1.4) - 1.8*bump(t, 12.5, 1.9)
	case EVCharging: // a commuter who plugs a car in late in the evening
		return 0.22 + 0.5*bump(t, 7, 0.8) + 0.9*bump(t, 19, 1.3) + 3.0*bump(t, 22.7, 0.6)
	case SmallShop: // opening hours 08:00-18:00, nearly nothing at night
		return 0.04 + 1.2*block(t, 8, 18, 0.2)
	default: // AirConditioning: afternoon cooling on a hot day
		return 0.25 + 0.45*bump(t, 7, 0.8) + 1.9*bump(t, 15.5, 2.0) + 0.7*bump(t, 20.5, 1.2)
	}
}

// curveSteps is the resolution (steps per hour) of the tabulated curves used by the
// generator; linear interpolation between steps differs from curve by < 1e-3 kWh.
const curveSteps = 64

// curveTable holds curve(a, t) at t = i/curveSteps for i in [0, 24*curveSteps], built once.
var curveTable = func() (tab [numArchetypes][Hours*curveSteps + 1]float64) {
	for a := range tab {
		for i := range tab[a] {
			tab[a][i] = curve(a, float64(i)/curveSteps)
		}
	}
	return tab
}()

// curveAt interpolates the tabulated curve of archetype a at hour t (any real t).
func curveAt(a int, t float64) float64 {
	t = math.Mod(t, Hours)
	if t < 0 {
		t += Hours
	}
	f := t * curveSteps
	i := int(f)
	if i >= Hours*curveSteps {
		i = Hours*curveSteps - 1
	}
	w := f - float64(i)
	tab := &curveTable[a]
	return tab[i] + w*(tab[i+1]-tab[i])
}

// MeanCurve returns the noiseless 24-hour profile of archetype a (an index into
// [ArchetypeNames]) for a typical household: no shift, unit amplitude.
func MeanCurve(a int) []float64 {
	out := make([]float64, Hours)
	for h := range out {
		out[h] = curve(a, float64(h)+0.5)
	}
	return out
}

// Household variation around the archetype curve (invented for the demo): a household's
// size scales its curve log-normally, its habits shift the day by a fraction of an hour,
// and each day adds a little more of both.
const (
	homeAmpSD   = 0.10 // log-sd of a household's size
	homeShiftSD = 0.25 // hours
	dayAmpSD    = 0.04
	dayShiftSD  = 0.15
	maxShift    = 1.5
)

// loadGen holds what a partition's rows are generated from.
type loadGen struct {
	opt     LoadOptions
	groups  buckets     // home id -> archetype
	perm    permutation // row -> home id when shuffled
	idWidth int
	day     int32 // days since the Unix epoch of partition 0
}

func newLoadGen(opt LoadOptions) (*loadGen, error) {
	if err := opt.Validate(); err != nil {
		return nil, err
	}
	shares := opt.Shares
	if shares == nil {
		shares = DefaultShares()[:opt.Archetypes]
	}
	sum := 0.0
	for _, s := range shares {
		sum += s
	}
	w := make([]float64, 0, opt.Archetypes+1)
	labels := make([]int, 0, opt.Archetypes+1)
	for i, s := range shares {
		w = append(w, (1-opt.HeatWave)*s/sum)
		labels = append(labels, i)
	}
	w = append(w, opt.HeatWave)
	labels = append(labels, AirConditioning)
	g := &loadGen{
		opt:     opt,
		groups:  newBuckets(quotas(opt.Rows, w), labels),
		perm:    newPermutation(opt.Rows, opt.Seed),
		idWidth: max(7, len(fmt.Sprint(opt.Rows-1))),
	}
	start := opt.Start
	if start.IsZero() {
		start = DefaultStart
	}
	y, m, d := start.UTC().Date()
	g.day = int32(time.Date(y, m, d, 0, 0, 0, 0, time.UTC).Unix() / 86400)
	return g, nil
}

// home returns the household id of row r.
func (g *loadGen) home(r int) int {
	if g.opt.Order == Sorted {
		return r
	}
	return g.perm.at(r)
}

// appendMeterID appends the meter id of a household ("MTR" and the zero-padded id); ids
// sort in household order, which groups archetypes.
func (g *loadGen) appendMeterID(dst []byte, home int) []byte {
	dst = append(dst, "MTR"...)
	n := len(dst)
	dst = strconv.AppendInt(dst, int64(home), 10)
	if pad := g.idWidth - (len(dst) - n); pad > 0 {
		dst = append(dst, make([]byte, pad)...)
		copy(dst[n+pad:], dst[n:])
		for i := n; i < n+pad; i++ {
			dst[i] = '0'
		}
	}
	return dst
}

// date returns the day (days since the Unix epoch) and the YYYY-MM-DD name of partition p.
func (g *loadGen) date(p int) (int32, string) {
	d := g.day + int32(p)
	return d, time.Unix(int64(d)*86400, 0).UTC().Format(time.DateOnly)
}

// rowScratch holds the reusable random sources of a generator loop.
type rowScratch struct {
	homeSrc, daySrc rand.PCG
	homeRng, dayRng *rand.Rand
}

func newRowScratch() *rowScratch {
	s := &rowScratch{}
	s.homeRng = rand.New(&s.homeSrc)
	s.dayRng = rand.New(&s.daySrc)
	return s
}

// fill generates rows r0..r0+n-1 of partition p: x gets n*24 values (NaN for null
// hours, otherwise float32-representable), labels, homes and tariffs get n values.
func (g *loadGen) fill(p, r0, n int, x []float64, labels, homes []int, tariffs []uint8, s *rowScratch) {
	for i := range n {
		home := g.home(r0 + i)
		a := g.groups.label(home)
		s.homeSrc.Seed(seedPair(g.opt.Seed, streamHome, uint64(home)))
		s.daySrc.Seed(seedPair(g.opt.Seed, streamDay, uint64(home)<<17^uint64(p)))
		hr, dr := s.homeRng, s.dayRng

		u := hr.Float64()
		tariff := uint8(2)
		if u < tariffOdds[a][0] {
			tariff = 0
		} else if u < tariffOdds[a][1] {
			tariff = 1
		}
		amp := math.Exp(homeAmpSD*hr.NormFloat64() + dayAmpSD*dr.NormFloat64())
		shift := homeShiftSD*hr.NormFloat64() + dayShiftSD*dr.NormFloat64()
		shift = math.Max(-maxShift, math.Min(maxShift, shift))

		row := x[i*Hours : (i+1)*Hours]
		for h := range row {
			v := amp*curveAt(a, float64(h)+0.5-shift) + g.opt.Noise*dr.NormFloat64()
			if v < 0 && a != RooftopSolar {
				v = 0 // only solar homes export
			}
			row[h] = float64(float32(v))
		}
		if g.opt.NullShare > 0 && dr.Float64() < g.opt.NullShare {
			l := 1 + dr.IntN(6)
			st := dr.IntN(Hours - l + 1)
			for h := st; h < st+l; h++ {
				row[h] = math.NaN()
			}
		}
		labels[i], homes[i], tariffs[i] = a, home, tariff
	}
}

// Loads generates partition p (0-based) of the demo scenario in memory: x holds Rows
// row-major 24-hour profiles in kWh (NaN for null hours; other values are exactly
// representable as float32, as written to files) and labels the archetype of each row
// (an index into [ArchetypeNames]). It uses the code path of [WriteLoads], so the rows
// equal the rows of that partition's file. It panics if opt is invalid (see
// [LoadOptions.Validate]) or p is outside [0, Partitions).
func Loads(opt LoadOptions, p int) (x []float64, labels []int) {
	g, err := newLoadGen(opt)
	if err != nil {
		panic(err)
	}
	if p < 0 || p >= opt.Partitions {
		panic(fmt.Sprintf("synth: partition %d outside [0, %d)", p, opt.Partitions))
	}
	x = make([]float64, opt.Rows*Hours)
	labels = make([]int, opt.Rows)
	homes := make([]int, opt.Rows)
	tariffs := make([]uint8, opt.Rows)
	g.fill(p, 0, opt.Rows, x, labels, homes, tariffs, newRowScratch())
	return x, labels
}
