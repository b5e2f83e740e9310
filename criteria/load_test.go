package criteria_test

import (
	"testing"

	"github.com/kgauge/kgauge/internal/kmeans"
	"github.com/kgauge/kgauge/internal/refsets"
)

// loadPoints reads a reference point set (internal/refsets) as unit-weight points.
func loadPoints(path string) (kmeans.Data, error) {
	x, d, err := refsets.Read(path)
	if err != nil {
		return kmeans.Data{}, err
	}
	return kmeans.Data{X: x, D: d}, nil
}

func mustLoad(t testing.TB, path string) kmeans.Data {
	t.Helper()
	p, err := loadPoints(path)
	if err != nil {
		t.Fatal(err)
	}
	return p
}
