package criteria

import "github.com/kgauge/kgauge/internal/kmeans"

// Points is a point set in row-major layout with optional weights: X holds Len()×D values, W one
// weight per point (nil: every weight 1). It is the type of Summary.Coreset and Summary.Sample,
// of ExactSummary's and WardLinkage's argument and of Result.Fits' points; it names the internal
// kmeans.Data so that a caller outside this module can name and build it.
type Points = kmeans.Data
