package synth

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// mixGen holds the geometry of a mixture and the row-to-cluster map.
type mixGen struct {
	opt     MixtureOptions
	d       int
	centres []float64 // K*D, before column scaling
	dirs    []float64 // K*D unit elongation directions (nil when spherical)
	stretch float64   // Elongation - 1
	scales  []float64 // D column scales (nil when ScaleSpread is 0)
	groups  buckets
	perm    permutation
}

func newMixGen(opt MixtureOptions) (*mixGen, error) {
	if err := opt.Validate(); err != nil {
		return nil, err
	}
	d, k := opt.Dims, opt.K
	g := &mixGen{opt: opt, d: d, stretch: opt.elongation() - 1}
	var src rand.PCG
	src.Seed(seedPair(opt.Seed, streamMixGeom, 0))
	rng := rand.New(&src)
	g.centres = centres(rng, k, d, opt.Separation)
	if g.stretch > 0 {
		g.dirs = make([]float64, k*d)
		for c := range k {
			randomUnit(rng, g.dirs[c*d:(c+1)*d])
		}
	}
	if opt.ScaleSpread > 0 {
		g.scales = make([]float64, d)
		for j := range g.scales {
			g.scales[j] = math.Pow(10, opt.ScaleSpread*(2*rng.Float64()-1))
		}
	}
	shares := opt.Shares
	if shares == nil {
		shares = make([]float64, k)
		for i := range shares {
			shares[i] = 1
		}
	}
	labels := make([]int, k)
	for i := range labels {
		labels[i] = i
	}
	g.groups = newBuckets(quotas(opt.Rows, shares), labels)
	g.perm = newPermutation(opt.Rows, opt.Seed)
	return g, nil
}

// randomUnit fills v with a uniformly random unit vector.
func randomUnit(rng *rand.Rand, v []float64) {
	for {
		s := 0.0
		for j := range v {
			v[j] = rng.NormFloat64()
			s += v[j] * v[j]
		}
		if s > 1e-12 {
			s = 1 / math.Sqrt(s)
			for j := range v {
				v[j] *= s
			}
			return
		}
	}
}

// centres places k centres in d dimensions: a randomly rotated regular simplex with edge
// sep when k <= d (orthonormal directions scaled by sep/sqrt(2), then centred), otherwise
// standard normal points rescaled so that the closest pair is sep apart.
func centres(rng *rand.Rand, k, d int, sep float64) []float64 {
	c := make([]float64, k*d)
	if k == 1 {
		return c
	}
	if k <= d {
		// Gram-Schmidt on random vectors gives k random orthonormal directions.
		for i := range k {
			v := c[i*d : (i+1)*d]
			for {
				randomUnit(rng, v)
				for j := range i {
					u := c[j*d : (j+1)*d]
					dot := 0.0
					for t := range v {
						dot += v[t] * u[t]
					}
					for t := range v {
						v[t] -= dot * u[t]
					}
				}
				n := 0.0
				for t := range v {
					n += v[t] * v[t]
				}
				if n > 1e-6 {
					n = 1 / math.Sqrt(n)
					for t := range v {
						v[t] *= n
					}
					break
				}
			}
		}
		scale := sep / math.Sqrt2
		mean := make([]float64, d)
		for i := range c {
			c[i] *= scale
			mean[i%d] += c[i] / float64(k)
		}
		for i := range c {
			c[i] -= mean[i%d]
		}
		return c
	}
	for {
		for i := range c {
			c[i] = rng.NormFloat64()
		}
		m := math.Inf(1)
		for i := range k {
			for j := range i {
				s := 0.0
				for t := range d {
					e := c[i*d+t] - c[j*d+t]
					s += e * e
				}
				m = math.Min(m, s)
			}
		}
		if m > 1e-12 {
			f := sep / math.Sqrt(m)
			for i := range c {
				c[i] *= f
			}
			return c
		}
	}
}

// label returns the cluster of row r.
func (g *mixGen) label(r int) int {
	if g.opt.Order == Sorted {
		return g.groups.label(r)
	}
	return g.groups.label(g.perm.at(r))
}

// rowSource holds the reusable random source of a generating loop.
type rowSource struct {
	src rand.PCG
	rng *rand.Rand
}

func newRowSource() *rowSource {
	s := &rowSource{}
	s.rng = rand.New(&s.src)
	return s
}

// row generates row r into dst (len D) and returns its cluster. Each row draws from its
// own source, so the result does not depend on how rows are chunked.
func (g *mixGen) row(r int, dst []float64, s *rowSource) int {
	d := g.d
	c := g.label(r)
	s.src.Seed(seedPair(g.opt.Seed, streamMixRow, uint64(r)))
	rng := s.rng
	for j := range dst {
		dst[j] = rng.NormFloat64()
	}
	if g.dirs != nil {
		u := g.dirs[c*d : (c+1)*d]
		p := 0.0
		for j, v := range dst {
			p += v * u[j]
		}
		p *= g.stretch
		for j := range dst {
			dst[j] += p * u[j]
		}
	}
	mu := g.centres[c*d : (c+1)*d]
	for j := range dst {
		dst[j] += mu[j]
	}
	if g.scales != nil {
		for j := range dst {
			dst[j] *= g.scales[j]
		}
	}
	if g.opt.NullShare > 0 {
		for j := range dst {
			if rng.Float64() < g.opt.NullShare {
				dst[j] = math.NaN()
			}
		}
	}
	return c
}

// fill generates rows r0..r0+n-1 into x (row-major, n*D) and labels (may be nil).
func (g *mixGen) fill(r0, n int, x []float64, labels []int, s *rowSource) {
	d := g.d
	for i := range n {
		c := g.row(r0+i, x[i*d:(i+1)*d], s)
		if labels != nil {
			labels[i] = c
		}
	}
}

// fillCols generates rows r0..r0+n-1 column by column: cols[j][i] is value j of row r0+i.
// buf is scratch of length D.
func (g *mixGen) fillCols(r0, n int, cols [][]float64, buf []float64, s *rowSource) {
	for i := range n {
		g.row(r0+i, buf, s)
		for j, v := range buf {
			cols[j][i] = v
		}
	}
}

// Mixture generates the mixture described by opt in memory: x holds Rows row-major rows
// of Dims values (NaN for nulls when NullShare > 0) and labels the cluster of each row.
// The rows equal those [WriteMixture] writes for the same options. It panics if opt is
// invalid (see [MixtureOptions.Validate]).
func Mixture(opt MixtureOptions) (x []float64, labels []int) {
	g, err := newMixGen(opt)
	if err != nil {
		panic(err)
	}
	x = make([]float64, opt.Rows*opt.Dims)
	labels = make([]int, opt.Rows)
	g.fill(0, opt.Rows, x, labels, newRowSource())
	return x, labels
}

// MixtureCentres returns the K true cluster centres (row-major, K*Dims) of the mixture
// described by opt, in the column scales of the output.
func MixtureCentres(opt MixtureOptions) ([]float64, error) {
	g, err := newMixGen(opt)
	if err != nil {
		return nil, err
	}
	c := append([]float64(nil), g.centres...)
	if g.scales != nil {
		for i := range c {
			c[i] *= g.scales[i%g.d]
		}
	}
	return c, nil
}

// columnName returns the name of mixture column j of d.
func columnName(j, d int) string {
	return fmt.Sprintf("x%0*d", max(2, len(fmt.Sprint(d-1))), j)
}
