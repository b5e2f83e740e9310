package sketch

import "github.com/kgauge/kgauge/internal/kmeans"

// miniBatch is the state of mini-batch k-means (Sculley 2010) for one k, in the probe-scaled space:
// centres and the number of rows ever assigned to each, so that every centre is the running mean of
// the rows it has been given.
type miniBatch struct {
	k       int
	centres []float64
	counts  []float64
}

// update runs one mini-batch step: assign all rows of batch with the centres fixed (with a's
// scratch, one for every k of a sketch), then move each row's centre towards it with rate
// 1/count.
func (m *miniBatch) update(batch []float64, d int, labels []int32, a *kmeans.Assigner) {
	n := len(batch) / d
	labels = labels[:n]
	a.Assign(batch, d, m.centres, labels, nil)
	for i, c := range labels {
		m.counts[c]++
		eta := 1 / m.counts[c]
		ctr := m.centres[int(c)*d : int(c+1)*d]
		x := batch[i*d : (i+1)*d]
		for j := range ctr {
			ctr[j] += eta * (x[j] - ctr[j])
		}
	}
}

// CentreSet is one sketch's mini-batch k-means result for one k, in the data's raw units: the
// centres (K×D, row-major) and how many sampled rows each absorbed. Merged sketches keep every part's
// set; they are reconciled into one set of k centres when the sketch is finalised.
type CentreSet struct {
	K       int
	Centres []float64
	Counts  []float64
}
