// Package report renders an estimate's result as one self-contained HTML page: the data summary, the
// verdict and the votes, plots of every criterion drawn with gonum/plot and inlined as SVG data URIs,
// the per-k table, what the sampling gave up, the run-time figures beside the cost model's plan, and
// the result itself as embedded JSON. The page loads nothing from the network, runs no script, and
// every file and column name passes through html/template's escaping.
package report
