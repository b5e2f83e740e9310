package kmeans

// Data is a weighted point set, row-major: point i is X[i*D:(i+1)*D]. W nil means every
// weight is 1; otherwise len(W) must equal Len().
type Data struct {
	X []float64
	W []float64
	D int
}

// Len returns the number of points.
func (p Data) Len() int {
	if p.D <= 0 {
		return 0
	}
	return len(p.X) / p.D
}

// Weight returns the weight of point i (1 when W is nil).
func (p Data) Weight(i int) float64 {
	if p.W == nil {
		return 1
	}
	return p.W[i]
}

// TotalWeight returns the sum of the weights (Len() when W is nil).
func (p Data) TotalWeight() float64 {
	if p.W == nil {
		return float64(p.Len())
	}
	s := 0.0
	for _, w := range p.W {
		s += w
	}
	return s
}

// Point returns point i as a sub-slice of X (not a copy).
func (p Data) Point(i int) []float64 {
	return p.X[i*p.D : (i+1)*p.D : (i+1)*p.D]
}

func (p Data) check() {
	if p.D <= 0 {
		panic("kmeans: non-positive dimension")
	}
	if len(p.X)%p.D != 0 {
		panic("kmeans: len(X) is not a multiple of D")
	}
	if p.W != nil && len(p.W) != len(p.X)/p.D {
		panic("kmeans: len(W) != number of points")
	}
}
