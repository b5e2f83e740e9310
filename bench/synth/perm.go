package synth

import (
	"math"
	"math/bits"
)

// mix64 is the splitmix64 finalizer, a bijective 64-bit mixing function.
func mix64(z uint64) uint64 {
	z ^= z >> 30
	z *= 0xbf58476d1ce4e5b9
	z ^= z >> 27
	z *= 0x94d049bb133111eb
	z ^= z >> 31
	return z
}

// Stream constants keep the sources of different purposes apart for the same Seed.
const (
	streamHome    = 0x686f6d65 // per household, stable across days
	streamDay     = 0x646179   // per household and day
	streamShuffle = 0x73687566 // row order
	streamMixRow  = 0x6d6978   // per mixture row
	streamMixGeom = 0x67656f6d // mixture centres, directions and scales
)

// seedPair returns the two PCG seeds for item idx of a stream.
func seedPair(seed, stream, idx uint64) (uint64, uint64) {
	a := mix64(seed ^ mix64(stream))
	return a, mix64(a ^ mix64(idx+0x9e3779b97f4a7c15))
}

// quotas splits n items over groups in proportion to w (non-negative, positive sum)
// by largest remainder; ties go to the lower index. The counts sum to n.
func quotas(n int, w []float64) []int {
	sum := 0.0
	for _, v := range w {
		sum += v
	}
	c := make([]int, len(w))
	rem := make([]float64, len(w))
	left := n
	for i, v := range w {
		q := float64(n) * v / sum
		c[i] = int(math.Floor(q))
		rem[i] = q - float64(c[i])
		left -= c[i]
	}
	for ; left > 0; left-- {
		best := -1
		for i := range rem {
			if w[i] > 0 && (best < 0 || rem[i] > rem[best]) {
				best = i
			}
		}
		c[best]++
		rem[best] = -1
	}
	return c
}

// permutation is a seeded bijection of [0, n) computed in O(1) memory: a four-round
// balanced Feistel network on the smallest even number of bits covering n, with cycle
// walking to stay inside [0, n).
type permutation struct {
	n    uint64
	half uint // bits per Feistel half
	mask uint64
	keys [4]uint64
}

func newPermutation(n int, seed uint64) permutation {
	p := permutation{n: uint64(n)}
	b := uint(bits.Len64(uint64(n - 1)))
	if b < 2 {
		b = 2
	}
	p.half = (b + 1) / 2
	p.mask = 1<<p.half - 1
	for i := range p.keys {
		p.keys[i], _ = seedPair(seed, streamShuffle, uint64(i))
	}
	return p
}

// at returns the image of i (0 <= i < n).
func (p *permutation) at(i int) int {
	x := uint64(i)
	for {
		l, r := x>>p.half, x&p.mask
		for _, k := range p.keys {
			l, r = r, l^(mix64(r^k)&p.mask)
		}
		x = l<<p.half | r
		if x < p.n {
			return int(x)
		}
	}
}

// buckets maps an item index in [0, n) to its group given consecutive group counts.
type buckets struct {
	ends   []int // cumulative end of each non-empty group
	labels []int // label of each non-empty group
}

func newBuckets(counts, labels []int) buckets {
	var b buckets
	end := 0
	for i, c := range counts {
		if c == 0 {
			continue
		}
		end += c
		b.ends = append(b.ends, end)
		b.labels = append(b.labels, labels[i])
	}
	return b
}

func (b *buckets) label(i int) int {
	for j, e := range b.ends {
		if i < e {
			return b.labels[j]
		}
	}
	return b.labels[len(b.labels)-1]
}
