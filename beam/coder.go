package beam

import (
	"bytes"
	"fmt"
	"reflect"

	abeam "github.com/apache/beam/sdks/v2/go/pkg/beam"
	"github.com/kgauge/kgauge/sketch"
)

// Beam's default coder for a struct pointer is a schema coder over exported fields, which would
// silently drop every unexported field of a sketch (the coreset, the sample, the moments): sketches
// travel between workers in their own file format instead, which carries everything and a checksum.
func init() {
	abeam.RegisterCoder(reflect.TypeOf((*sketch.Sketch)(nil)), encodeSketch, decodeSketch)
}

// encodeSketch writes sk in the sketch file format. It settles sk, as every encode does.
func encodeSketch(sk *sketch.Sketch) ([]byte, error) {
	if sk == nil {
		return nil, fmt.Errorf("beam: cannot encode a nil sketch")
	}
	var b bytes.Buffer
	if err := sk.Encode(&b); err != nil {
		return nil, fmt.Errorf("beam: encode sketch: %w", err)
	}
	return b.Bytes(), nil
}

// decodeSketch reads a sketch written by encodeSketch; corrupt bytes are an error, never a panic.
func decodeSketch(data []byte) (*sketch.Sketch, error) {
	sk, err := sketch.Decode(bytes.NewReader(data))
	if err != nil {
		return nil, fmt.Errorf("beam: decode sketch: %w", err)
	}
	return sk, nil
}
