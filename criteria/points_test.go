package criteria_test

import (
	"testing"

	"github.com/kgauge/kgauge/criteria"
)

// TestPointsIsNameable: a caller can build the points of the exported API through criteria.Points
// alone (issue 16: the exported API used a type of an internal package).
func TestPointsIsNameable(t *testing.T) {
	p := criteria.Points{X: []float64{0, 0, 1, 1, 2, 2}, W: []float64{1, 2, 1}, D: 2}
	s := criteria.ExactSummary(p)
	if s.N != 4 || s.Coreset.Len() != 3 {
		t.Errorf("ExactSummary of 3 points with weights 1, 2, 1: N %v, coreset %d", s.N, s.Coreset.Len())
	}
	if got := s.Mean[0]; got != 1 {
		t.Errorf("weighted mean %v, want 1", got)
	}
}
