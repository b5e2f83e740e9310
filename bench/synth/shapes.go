package synth

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// Scenario returns one realization of a simulation scenario of Tibshirani, Walther & Hastie
// (2001), "Estimating the number of clusters in a data set via the gap statistic", JRSS-B
// 63(2):411-423, section 6 (parameters as summarised in the developers' methods notes (METHODS.md, kept beside the repository) §1.3, from memory
// of the paper), as row-major points, their dimension and the true k:
//
//	'a' null: 200 points uniform on the unit cube in 10 dimensions (k = 1);
//	'b' 3 clusters in 2 dims: 25, 25, 50 standard-normal points at (0,0), (0,5), (5,-3);
//	'c' 4 clusters in 3 dims: 25 or 50 standard-normal points each (fair coin), centres N(0, 5 I);
//	'd' 4 clusters in 10 dims: as 'c' with centres N(0, 1.9 I);
//	'e' 2 elongated clusters in 3 dims: x1 = x2 = x3 = t, t 100 equally spaced values in
//	    [-0.5, 0.5], plus N(0, 0.1^2) noise; the second cluster the same plus 10 on each feature.
//
// In 'c' and 'd' a realization is redrawn while two points of different clusters are less than 1
// apart (our reading of the paper's discard rule).
func Scenario(name byte, rng *rand.Rand) (x []float64, d, k int) {
	var lab []int
	gauss := func(c []float64, n, j int) {
		for range n {
			for _, m := range c {
				x = append(x, m+rng.NormFloat64())
			}
			lab = append(lab, j)
		}
	}
	switch name {
	case 'a':
		for range 200 * 10 {
			x = append(x, rng.Float64())
		}
		return x, 10, 1
	case 'b':
		gauss([]float64{0, 0}, 25, 0)
		gauss([]float64{0, 5}, 25, 1)
		gauss([]float64{5, -3}, 50, 2)
		return x, 2, 3
	case 'c', 'd':
		d, v := 3, 5.0
		if name == 'd' {
			d, v = 10, 1.9
		}
		for {
			x, lab = x[:0], lab[:0]
			for j := range 4 {
				c := make([]float64, d)
				for t := range c {
					c[t] = math.Sqrt(v) * rng.NormFloat64()
				}
				n := 25
				if rng.IntN(2) == 1 {
					n = 50
				}
				gauss(c, n, j)
			}
			if minCrossDist2(x, lab, d) >= 1 {
				return x, d, 4
			}
		}
	case 'e':
		for c := range 2 {
			for i := range 100 {
				t := -0.5 + float64(i)/99
				for range 3 {
					x = append(x, t+0.1*rng.NormFloat64()+10*float64(c))
				}
			}
		}
		return x, 3, 2
	}
	panic(fmt.Sprintf("synth: unknown scenario %q", name))
}

// minCrossDist2 returns the smallest squared distance between points of different labels.
func minCrossDist2(x []float64, lab []int, d int) float64 {
	best := math.Inf(1)
	for i := range lab {
		for j := i + 1; j < len(lab); j++ {
			if lab[i] == lab[j] {
				continue
			}
			s := 0.0
			for t := range d {
				u := x[i*d+t] - x[j*d+t]
				s += u * u
			}
			best = min(best, s)
		}
	}
	return best
}

// OneCluster returns n points of a single cluster of the named shape in d dimensions, invented for
// property tests and the calibration grid:
//
//	"correlated": Gaussian, x_j = sum_{l<=j} 0.8^(j-l) z_l (an autoregressive correlation);
//	"lognormal":  independent exp(N(0,1)) columns (right-skewed, positive);
//	"student-t":  multivariate Student t with 3 degrees of freedom (heavy tails);
//	"uniform":    uniform on the unit cube;
//	"elongated":  Gaussian with standard deviation 6 along the first axis and 1 along the others.
func OneCluster(shape string, n, d int, rng *rand.Rand) ([]float64, error) {
	x := make([]float64, n*d)
	z := make([]float64, d)
	for i := range n {
		row := x[i*d : (i+1)*d]
		switch shape {
		case "correlated":
			for j := range z {
				z[j] = rng.NormFloat64()
			}
			for j := range d {
				v := 0.0
				for l := 0; l <= j; l++ {
					v += math.Pow(0.8, float64(j-l)) * z[l]
				}
				row[j] = v
			}
		case "lognormal":
			for j := range row {
				row[j] = math.Exp(rng.NormFloat64())
			}
		case "student-t":
			c := 0.0
			for range 3 {
				g := rng.NormFloat64()
				c += g * g
			}
			s := math.Sqrt(c / 3)
			for j := range row {
				row[j] = rng.NormFloat64() / s
			}
		case "uniform":
			for j := range row {
				row[j] = rng.Float64()
			}
		case "elongated":
			for j := range row {
				row[j] = rng.NormFloat64()
			}
			row[0] *= 6
		default:
			return nil, fmt.Errorf("synth: unknown one-cluster shape %q", shape)
		}
	}
	return x, nil
}
