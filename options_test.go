package kgauge

import (
	"reflect"
	"testing"
)

// TestZeroOptionsAreDefaults: every zero field of Options means its documented default, the seed
// included (issue 16: Options{} ran with seed 0 while DefaultOptions has 1), and the run's seed
// reaches the sketch and the criteria.
func TestZeroOptionsAreDefaults(t *testing.T) {
	zero, def := Options{}.withDefaults(), DefaultOptions().withDefaults()
	if !reflect.DeepEqual(zero, def) {
		t.Errorf("Options{} after defaults:\n%+v\nDefaultOptions:\n%+v", zero, def)
	}
	if zero.Seed != 1 || zero.Sketch.Seed != 1 || zero.Criteria.Seed != 1 {
		t.Errorf("seeds %d, %d, %d; want 1 everywhere", zero.Seed, zero.Sketch.Seed, zero.Criteria.Seed)
	}
	o := Options{Seed: 9}
	o.Criteria.Seed = 4
	if w := o.withDefaults(); w.Criteria.Seed != 9 || w.Sketch.Seed != 9 {
		t.Errorf("seed 9: sketch %d, criteria %d; want the run's seed in both", w.Sketch.Seed, w.Criteria.Seed)
	}
}
