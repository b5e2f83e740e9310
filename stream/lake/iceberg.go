package lake

import (
	"errors"

	"github.com/kgauge/kgauge/stream"
)

type icebergTable struct{ snapshot int64 }

func readIceberg(root loc, snapshot int64) (*icebergTable, error) {
	return nil, errors.New("iceberg: not yet")
}

func (t *icebergTable) files(sub string, where []stream.KeyValue) ([]stream.File, int64, error) {
	return nil, 0, nil
}
