package criteria

import "github.com/kgauge/kgauge/internal/kmeans"

// Points is a point set in row-major layout with optional weights: point i is X[i*D:(i+1)*D], W
// holds one weight per point (nil: every weight 1). It is the type of Summary.Coreset and
// Summary.Sample and of the point arguments of ExactSummary, WardLinkage and the index functions.
// Its methods are Len, Weight, TotalWeight and Point. It is the same type as the k-means kernel's
// point set (an alias), so a caller outside this module can name it, build it as a composite
// literal (criteria.Points{X: x, D: d}) and pass it without a copy.
type Points = kmeans.Data

// Fit is one weighted k-means fit of a point set: K centres (Centres, K*D row-major), the nearest
// centre of every point (Labels), the weight of every cluster (Sizes), the weighted sum of squared
// distances to the assigned centres (Cost) and the Lloyd iterations run (Iters). Result.Fits holds
// the chosen fit per k; it is the k-means kernel's result type (an alias), nameable outside the
// module.
type Fit = kmeans.Result
