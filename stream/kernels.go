package stream

import (
	"math"
	"slices"
)

// The kernels below copy one column's values for k consecutive rows into the
// row-major output: value i goes to dst[o+i*d]. They mark bad[i] = 1 for a
// null or NaN and return the index of the first ±Inf, or -1. The test v-v != 0
// is true exactly for NaN and ±Inf, so finite values cost one compare.

// nan is written where a value is null, so that a skipped row shows which columns made it bad.
var nan = math.NaN()

// number is the set of Go types the decoders hand out as typed slices.
type number interface {
	~int8 | ~int16 | ~int32 | ~int64 | ~uint8 | ~uint16 | ~uint32 | ~uint64 | ~float32 | ~float64
}

// putDense copies float64(src[i]) for every i.
func putDense[T number](dst []float64, o, d int, src []T, bad []uint8) int {
	bad = bad[:len(src)]
	for i, x := range src {
		v := float64(x)
		dst[o] = v
		if v-v != 0 {
			if v != v {
				bad[i] = 1
			} else {
				return i
			}
		}
		o += d
	}
	return -1
}

// putLevels copies the packed non-null values src for the rows whose
// definition level is maxDef and marks the other rows bad. It returns the
// number of values of src used and the index of the first ±Inf, or -1.
func putLevels[T number](dst []float64, o, d int, defs []byte, maxDef byte, src []T, bad []uint8) (int, int) {
	bad = bad[:len(defs)]
	j := 0
	for i, lv := range defs {
		if lv != maxDef {
			bad[i] = 1
			dst[o] = nan
			o += d
			continue
		}
		v := float64(src[j])
		j++
		dst[o] = v
		if v-v != 0 {
			if v != v {
				bad[i] = 1
			} else {
				return j, i
			}
		}
		o += d
	}
	return j, -1
}

// putDict copies dict[idx[i]] for every i.
func putDict(dst []float64, o, d int, idx []int32, dict []float64, bad []uint8) int {
	bad = bad[:len(idx)]
	for i, x := range idx {
		v := dict[x]
		dst[o] = v
		if v-v != 0 {
			if v != v {
				bad[i] = 1
			} else {
				return i
			}
		}
		o += d
	}
	return -1
}

// putDictLevels is putDict for an optional column: idx holds the indexes of
// the non-null rows only.
func putDictLevels(dst []float64, o, d int, defs []byte, maxDef byte, idx []int32, dict []float64, bad []uint8) (int, int) {
	bad = bad[:len(defs)]
	j := 0
	for i, lv := range defs {
		if lv != maxDef {
			bad[i] = 1
			dst[o] = nan
			o += d
			continue
		}
		v := dict[idx[j]]
		j++
		dst[o] = v
		if v-v != 0 {
			if v != v {
				bad[i] = 1
			} else {
				return j, i
			}
		}
		o += d
	}
	return j, -1
}

// putMasked copies src[i] for the rows whose bit off+i is set in the Arrow
// validity bitmap and marks the other rows bad.
func putMasked[T number](dst []float64, o, d int, src []T, bitmap []byte, off int, bad []uint8) int {
	bad = bad[:len(src)]
	for i, x := range src {
		b := off + i
		if bitmap[b>>3]&(1<<(b&7)) == 0 {
			bad[i] = 1
			dst[o] = nan
			o += d
			continue
		}
		v := float64(x)
		dst[o] = v
		if v-v != 0 {
			if v != v {
				bad[i] = 1
			} else {
				return i
			}
		}
		o += d
	}
	return -1
}

// compact moves the rows not marked in bad to the front of dst (row width d)
// and returns how many there are; for each row it drops it counts, per
// column, the nulls and NaNs in nulls.
func compact(dst []float64, bad []uint8, d int, nulls []int64) int {
	w := 0
	for r, b := range bad {
		if b != 0 {
			for j, v := range dst[r*d : (r+1)*d] {
				if v != v {
					nulls[j]++
				}
			}
			continue
		}
		if w != r {
			copy(dst[w*d:(w+1)*d], dst[r*d:(r+1)*d])
		}
		w++
	}
	return w
}

// allFinite reports whether every value of v is finite: v−v is 0 for a finite value and NaN for NaN
// and ±Inf, and a NaN anywhere makes the sums NaN. Four sums keep the additions independent.
func allFinite(v []float64) bool {
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+4 <= len(v); i += 4 {
		s0 += v[i] - v[i]
		s1 += v[i+1] - v[i+1]
		s2 += v[i+2] - v[i+2]
		s3 += v[i+3] - v[i+3]
	}
	for ; i < len(v); i++ {
		s0 += v[i] - v[i]
	}
	return s0+s1+s2+s3 == 0
}

// markBad marks bad[i] = 1 for each NaN of v and returns the index of the first ±Inf, or -1.
func markBad(v []float64, bad []uint8) int {
	bad = bad[:len(v)]
	for i, x := range v {
		if x-x != 0 {
			if x != x {
				bad[i] = 1
			} else {
				return i
			}
		}
	}
	return -1
}

// viewDense sets *col to the view v of a float64 column with no nulls when its values are all
// finite, marking its NaNs in bad otherwise. It returns the index of the first ±Inf, or -1.
func viewDense(col *[]float64, v []float64, bad []uint8) int {
	*col = v
	if allFinite(v) {
		return -1
	}
	return markBad(v, bad)
}

// compactColumns drops the rows marked in bad from every column, counting per column the nulls
// and NaNs among them in nulls, and returns how many rows are left. Columns that are views are
// copied into their scratch first; the others are compacted in place.
func compactColumns(cols, scratch [][]float64, bad []uint8, nulls []int64) int {
	first := slices.Index(bad, 1)
	if first < 0 {
		return len(bad)
	}
	w := 0
	for c, col := range cols {
		dst := scratch[c][:len(bad)]
		w = first
		if &dst[0] != &col[0] {
			copy(dst[:first], col[:first])
		}
		for r := first; r < len(bad); r++ {
			v := col[r]
			if bad[r] != 0 {
				if v != v {
					nulls[c]++
				}
				continue
			}
			dst[w] = v
			w++
		}
		cols[c] = dst[:w]
	}
	return w
}
