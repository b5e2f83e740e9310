package report

import (
	"bytes"
	"encoding/base64"
	"fmt"
	"html/template"
	"image/color"
	"math"
	"sort"
	"strconv"
	"strings"

	"github.com/kgauge/kgauge/criteria"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"
)

// The page's palette: ink for text and axes, and one colour per kind of mark.
var (
	inkColour    = color.RGBA{0x2e, 0x33, 0x3d, 0xff}
	tealColour   = color.RGBA{0x1f, 0x6f, 0x78, 0xff}
	amberColour  = color.RGBA{0xc2, 0x76, 0x12, 0xff}
	plumColour   = color.RGBA{0x7d, 0x3c, 0x6e, 0xff}
	bandColour   = color.RGBA{0x1f, 0x6f, 0x78, 0x38}
	markerColour = color.RGBA{0xb8, 0x32, 0x2a, 0xff}
)

// Figure is one rendered plot: its title, a caption, the SVG as a data URI and its legend. The
// legend is drawn by the page under the plot, so that it can never cover a curve.
type Figure struct {
	ID      string
	Title   string
	Caption string
	Src     template.URL
	Legend  []LegendEntry
}

// LegendEntry is one line of a figure's legend: a label and how its mark looks.
type LegendEntry struct {
	Label  string
	Colour string // CSS colour of the mark
	Mark   string // "line", "dashed", "ring", "band" or "cut"
}

// legendOf collects a figure's legend while its plot is built.
type legendOf []LegendEntry

func (l *legendOf) add(label string, c color.Color, mark string) {
	r, g, b, _ := c.RGBA()
	*l = append(*l, LegendEntry{Label: label, Colour: fmt.Sprintf("#%02x%02x%02x", r>>8, g>>8, b>>8), Mark: mark})
}

// compactTicks are gonum's default tick positions with short labels: 125k rather than 125000.00.
type compactTicks struct{ plot.Ticker }

func (c compactTicks) Ticks(lo, hi float64) []plot.Tick {
	t := c.Ticker
	if t == nil {
		t = plot.DefaultTicks{}
	}
	ticks := t.Ticks(lo, hi)
	for i := range ticks {
		if ticks[i].Label != "" {
			ticks[i].Label = compact(ticks[i].Value)
		}
	}
	return ticks
}

// compact formats v in at most about four characters of digits, with k, M, G or T for thousands.
func compact(v float64) string {
	a := math.Abs(v)
	switch {
	case a == 0:
		return "0"
	case a >= 1e13 || a < 1e-3:
		return strconv.FormatFloat(v, 'g', 3, 64)
	}
	for _, u := range []struct {
		div  float64
		name string
	}{{1e12, "T"}, {1e9, "G"}, {1e6, "M"}, {1e3, "k"}} {
		if a >= u.div {
			return strconv.FormatFloat(v/u.div, 'g', 3, 64) + u.name
		}
	}
	return strconv.FormatFloat(v, 'g', 3, 64)
}

// kTicks labels the k axis at whole numbers only: every k when the range is short, otherwise
// every 2nd, 5th, 10th… k so that at most a dozen labels share the axis, with an unlabelled tick
// at every k in between while there are at most 120.
type kTicks struct{}

func (kTicks) Ticks(lo, hi float64) []plot.Tick {
	a, b := math.Ceil(lo), math.Floor(hi)
	if b < a {
		return nil
	}
	step := 1.0
	for _, s := range []float64{1, 2, 5, 10, 20, 50, 100, 200, 500} {
		step = s
		if (b-a)/s <= 12 {
			break
		}
	}
	var ticks []plot.Tick
	for k := a; k <= b; k++ {
		switch {
		case math.Mod(k, step) == 0:
			ticks = append(ticks, plot.Tick{Value: k, Label: fmt.Sprintf("%.0f", k)})
		case b-a <= 120:
			ticks = append(ticks, plot.Tick{Value: k})
		}
	}
	return ticks
}

const (
	figWidth  = 15 * vg.Centimeter
	figHeight = 9 * vg.Centimeter
)

func newPlot(title, xlabel, ylabel string) *plot.Plot {
	p := plot.New()
	p.Title.Text = title
	p.X.Label.Text = xlabel
	p.Y.Label.Text = ylabel
	sans := font.Font{Typeface: "Liberation", Variant: "Sans"}
	p.Title.TextStyle.Font = font.From(sans, 12)
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Label.TextStyle.Font = font.From(sans, 10)
		a.Tick.Label.Font = font.From(sans, 9)
		a.Color = inkColour
		a.Tick.Color = inkColour
	}
	p.X.Tick.Marker = kTicks{}
	p.Y.Tick.Marker = compactTicks{}
	// A little room on both sides, so the marks at the first and last k are not cut by the frame.
	p.X.Padding, p.Y.Padding = vg.Points(6), vg.Points(6)
	g := plotter.NewGrid()
	g.Vertical.Color = color.RGBA{0xdd, 0xdd, 0xd8, 0xff}
	g.Horizontal.Color = g.Vertical.Color
	p.Add(g)
	return p
}

// svgURI renders p as SVG and returns it as a data URI.
func svgURI(p *plot.Plot) (template.URL, error) {
	c := vgsvg.New(figWidth, figHeight)
	p.Draw(draw.New(c))
	var b bytes.Buffer
	if _, err := c.WriteTo(&b); err != nil {
		return "", fmt.Errorf("report: render plot %q: %w", p.Title.Text, err)
	}
	return template.URL("data:image/svg+xml;base64," + base64.StdEncoding.EncodeToString(b.Bytes())), nil
}

// series returns the finite (k, value) points of one score.
func series(perK []criteria.Scores, v func(criteria.Scores) float64) plotter.XYs {
	var xy plotter.XYs
	for _, s := range perK {
		if y := v(s); !math.IsNaN(y) && !math.IsInf(y, 0) {
			xy = append(xy, plotter.XY{X: float64(s.K), Y: y})
		}
	}
	return xy
}

func addLine(p *plot.Plot, leg *legendOf, xy plotter.XYs, c color.Color, name string, dashed bool) error {
	if len(xy) == 0 {
		return nil
	}
	l, s, err := plotter.NewLinePoints(xy)
	if err != nil {
		return err
	}
	l.Color = c
	l.Width = vg.Points(1.6)
	if dashed {
		l.Dashes = []vg.Length{vg.Points(5), vg.Points(3)}
	}
	s.Color = c
	s.Radius = vg.Points(2.2)
	s.Shape = draw.CircleGlyph{}
	p.Add(l, s)
	if name != "" {
		mark := "line"
		if dashed {
			mark = "dashed"
		}
		leg.add(name, c, mark)
	}
	return nil
}

// markK draws a ring around the point at k on xy and names it in the legend.
func markK(p *plot.Plot, leg *legendOf, xy plotter.XYs, k int, label string) error {
	for _, pt := range xy {
		if int(pt.X) == k {
			s, err := plotter.NewScatter(plotter.XYs{pt})
			if err != nil {
				return err
			}
			s.Shape = draw.RingGlyph{}
			s.Radius = vg.Points(4)
			s.Color = markerColour
			s.GlyphStyle.Shape = draw.RingGlyph{}
			p.Add(s)
			leg.add(label, markerColour, "ring")
			return nil
		}
	}
	return nil
}

// vote returns the k criterion c voted for, or 0 when it abstained.
func vote(votes []criteria.Vote, c string) int {
	for _, v := range votes {
		if v.Criterion == c && !v.Abstain {
			return v.K
		}
	}
	return 0
}

// errPoints are points with symmetric y errors, for plotter.NewYErrorBars.
type errPoints struct {
	plotter.XYs
	plotter.YErrors
}

func figures(perK []criteria.Scores, votes []criteria.Vote, ward criteria.Ward) ([]Figure, error) {
	var figs []Figure
	add := func(id, title, caption string, p *plot.Plot, leg legendOf) error {
		src, err := svgURI(p)
		if err != nil {
			return err
		}
		figs = append(figs, Figure{ID: id, Title: title, Caption: caption, Src: src, Legend: leg})
		return nil
	}

	// WCSS and its bend.
	var leg legendOf
	p := newPlot("Spread left inside the clusters", "k (number of clusters)", "within-cluster sum of squares")
	wcss := series(perK, func(s criteria.Scores) float64 { return s.WCSS })
	if err := addLine(p, &leg, wcss, tealColour, "within-cluster sum of squares at each k", false); err != nil {
		return nil, err
	}
	if k := vote(votes, criteria.NameElbow); k > 0 {
		if err := markK(p, &leg, wcss, k, fmt.Sprintf("where the curve bends most (Kneedle rule): k = %d", k)); err != nil {
			return nil, err
		}
	}
	if err := add("fig-wcss", "Spread left inside the clusters",
		"Each added cluster removes some spread; past the true k it removes little. The ring marks the bend the Kneedle rule finds.", p, leg); err != nil {
		return nil, err
	}

	// Silhouette with its confidence interval, drawn as a band and as bars so that a narrow
	// interval stays visible.
	leg = nil
	p = newPlot("Silhouette", "k (number of clusters)", "mean silhouette (−1 to 1)")
	var band, lower plotter.XYs
	var bars errPoints
	widest := 0.0
	for _, s := range perK {
		if math.IsNaN(s.SilhouetteLo) || math.IsNaN(s.SilhouetteHi) || math.IsNaN(s.Silhouette) {
			continue
		}
		band = append(band, plotter.XY{X: float64(s.K), Y: s.SilhouetteHi})
		lower = append(lower, plotter.XY{X: float64(s.K), Y: s.SilhouetteLo})
		bars.XYs = append(bars.XYs, plotter.XY{X: float64(s.K), Y: s.Silhouette})
		bars.YErrors = append(bars.YErrors, struct{ Low, High float64 }{s.Silhouette - s.SilhouetteLo, s.SilhouetteHi - s.Silhouette})
		widest = math.Max(widest, s.SilhouetteHi-s.SilhouetteLo)
	}
	if len(band) >= 2 {
		for i := len(lower) - 1; i >= 0; i-- {
			band = append(band, lower[i])
		}
		poly, err := plotter.NewPolygon(band)
		if err != nil {
			return nil, err
		}
		poly.Color = bandColour
		poly.LineStyle.Width = 0
		p.Add(poly)
		eb, err := plotter.NewYErrorBars(bars)
		if err != nil {
			return nil, err
		}
		eb.Color, eb.Width, eb.CapWidth = tealColour, vg.Points(1.2), vg.Points(7)
		p.Add(eb)
		leg.add("95% interval of the estimate", bandColour, "band")
	}
	sil := series(perK, func(s criteria.Scores) float64 { return s.Silhouette })
	if err := addLine(p, &leg, sil, tealColour, "estimated from anchor points", false); err != nil {
		return nil, err
	}
	if err := addLine(p, &leg, series(perK, func(s criteria.Scores) float64 { return s.SimplifiedSilhouette }), amberColour, "from distances to the centres only", true); err != nil {
		return nil, err
	}
	if k := vote(votes, criteria.NameSilhouette); k > 0 {
		if err := markK(p, &leg, sil, k, fmt.Sprintf("highest at k = %d", k)); err != nil {
			return nil, err
		}
	}
	if err := add("fig-silhouette", "Silhouette with its confidence interval",
		fmt.Sprintf("How much closer points are to their own cluster than to the next one. Bars and band show the 95%% interval of the anchor estimate (widest %.3f).", widest), p, leg); err != nil {
		return nil, err
	}

	// Gap statistic, both references, with s_k.
	leg = nil
	p = newPlot("Gap statistic", "k (number of clusters)", "Gap(k) ± s_k")
	for i, ref := range []struct {
		name   string
		v, s   func(criteria.Scores) float64
		colour color.Color
		vote   string
	}{{"against uniform points in the data's box", func(s criteria.Scores) float64 { return s.GapBox }, func(s criteria.Scores) float64 { return s.GapBoxS }, tealColour, criteria.NameGapBox},
		{"against uniform points in the box of the principal axes", func(s criteria.Scores) float64 { return s.GapPCA }, func(s criteria.Scores) float64 { return s.GapPCAS }, plumColour, criteria.NameGapPCA}} {
		var pts errPoints
		off := 0.1 * float64(2*i-1) // side by side, so the bars do not hide each other
		for _, s := range perK {
			g, e := ref.v(s), ref.s(s)
			if math.IsNaN(g) || math.IsNaN(e) {
				continue
			}
			pts.XYs = append(pts.XYs, plotter.XY{X: float64(s.K) + off, Y: g})
			pts.YErrors = append(pts.YErrors, struct{ Low, High float64 }{e, e})
		}
		if len(pts.XYs) == 0 {
			continue
		}
		if err := addLine(p, &leg, pts.XYs, ref.colour, ref.name, i == 1); err != nil {
			return nil, err
		}
		eb, err := plotter.NewYErrorBars(pts)
		if err != nil {
			return nil, err
		}
		eb.Color, eb.Width, eb.CapWidth = ref.colour, vg.Points(1.2), vg.Points(6)
		p.Add(eb)
		if k := vote(votes, ref.vote); k > 0 {
			if err := markK(p, &leg, pts.XYs, k, fmt.Sprintf("rule met first at k = %d (%s)", k, strings.TrimPrefix(ref.name, "against "))); err != nil {
				return nil, err
			}
		}
	}
	if err := add("fig-gap", "Gap statistic against two references",
		"How much tighter the clusters are than clusters of structureless points. Bars are s_k = sd_k·√(1 + 1/B) over the B reference sets; the rule takes the first k whose gap is within s of the next.", p, leg); err != nil {
		return nil, err
	}

	// BIC and AIC, each as its distance from its own best k, so that the two share a scale and the
	// minima are visible.
	leg = nil
	p = newPlot("Information criteria", "k (number of clusters)", "above the lowest value")
	bic := relative(series(perK, func(s criteria.Scores) float64 { return s.BICGMM }))
	aic := relative(series(perK, func(s criteria.Scores) float64 { return s.AICGMM }))
	icl := relative(series(perK, func(s criteria.Scores) float64 { return s.ICLGMM }))
	caption := "Gaussian mixtures fitted from each k-means solution, scored by BIC, AIC and ICL (BIC plus the price of overlapping groups; lower is better), each shown as its distance above its lowest value."
	if spansDecades(bic, aic, icl) {
		// Distances that span orders of magnitude squash the minimum into the axis: plot 1 + the
		// distance on a log scale, so the best k sits at 1 and its neighbours stay apart.
		for _, c := range []plotter.XYs{bic, aic, icl} {
			for i := range c {
				c[i].Y++
			}
		}
		p.Y.Scale = plot.LogScale{}
		p.Y.Tick.Marker = compactTicks{plot.LogTicks{Prec: -1}}
		p.Y.Label.Text = "1 + distance above the lowest value (log scale)"
		caption += " The scale is logarithmic because the distances span orders of magnitude."
	}
	if err := addLine(p, &leg, bic, tealColour, "BIC of the mixture", false); err != nil {
		return nil, err
	}
	if err := addLine(p, &leg, aic, amberColour, "AIC of the mixture", true); err != nil {
		return nil, err
	}
	if err := addLine(p, &leg, icl, plumColour, "ICL of the mixture", true); err != nil {
		return nil, err
	}
	if k := vote(votes, criteria.NameBICGMM); k > 0 {
		if err := markK(p, &leg, bic, k, fmt.Sprintf("BIC lowest at k = %d", k)); err != nil {
			return nil, err
		}
	}
	if err := add("fig-ic", "BIC, AIC and ICL of Gaussian mixtures", caption, p, leg); err != nil {
		return nil, err
	}

	// The top of the Ward dendrogram.
	if len(ward.Merges) > 0 {
		leg = nil
		p, err := dendrogram(ward, vote(votes, criteria.NameWard), &leg)
		if err != nil {
			return nil, err
		}
		if err := add("fig-ward", "Top of the Ward dendrogram",
			fmt.Sprintf("The last %d merges of Ward linkage on %d weighted %s; squares are groups merged earlier.",
				len(ward.Merges), ward.Leaves, ward.Source), p, leg); err != nil {
			return nil, err
		}
	}
	return figs, nil
}

// relative returns xy shifted so that its smallest value is 0.
func relative(xy plotter.XYs) plotter.XYs {
	if len(xy) == 0 {
		return xy
	}
	lo := math.Inf(1)
	for _, p := range xy {
		lo = math.Min(lo, p.Y)
	}
	out := make(plotter.XYs, len(xy))
	for i, p := range xy {
		out[i] = plotter.XY{X: p.X, Y: p.Y - lo}
	}
	return out
}

// spansDecades reports whether the positive values of the curves span more than two orders of
// magnitude, so that a linear axis would flatten all but the largest.
func spansDecades(curves ...plotter.XYs) bool {
	lo, hi := math.Inf(1), 0.0
	for _, c := range curves {
		for _, p := range c {
			if p.Y > 0 {
				lo, hi = math.Min(lo, p.Y), math.Max(hi, p.Y)
			}
		}
	}
	return hi > 100*lo
}

// dendrogram draws the last merges of a Ward linkage as a tree: height √(2·cost) as SciPy reports
// it, subtrees formed before the first kept merge drawn as squares on the baseline.
func dendrogram(w criteria.Ward, cutK int, leg *legendOf) (*plot.Plot, error) {
	p := newPlot("Ward linkage, top merges", "", "merge height √(2ΔWCSS)")
	p.X.Tick.Marker = plot.ConstantTicks(nil)
	m := w.Leaves
	// Merge t of all m−1 forms cluster m+t; the kept merges are the last ones.
	base := m - 1 - len(w.Merges)
	formed := map[int]int{} // cluster id → index in w.Merges
	for i := range w.Merges {
		formed[m+base+i] = i
	}
	height := func(i int) float64 { return math.Sqrt(2 * math.Max(w.Merges[i].Cost, 0)) }
	xs := map[int]float64{}
	var leaves []int
	var order func(id int)
	order = func(id int) {
		if i, ok := formed[id]; ok {
			order(w.Merges[i].A)
			order(w.Merges[i].B)
			return
		}
		xs[id] = float64(len(leaves))
		leaves = append(leaves, id)
	}
	root := m + base + len(w.Merges) - 1
	order(root)
	var place func(id int) (float64, float64)
	place = func(id int) (x, y float64) {
		i, ok := formed[id]
		if !ok {
			return xs[id], 0
		}
		xa, ya := place(w.Merges[i].A)
		xb, yb := place(w.Merges[i].B)
		h := height(i)
		l, err := plotter.NewLine(plotter.XYs{{X: xa, Y: ya}, {X: xa, Y: h}, {X: xb, Y: h}, {X: xb, Y: yb}})
		if err == nil {
			l.Color = tealColour
			l.Width = vg.Points(1.3)
			p.Add(l)
		}
		return (xa + xb) / 2, h
	}
	place(root)
	var pts plotter.XYs
	sort.Ints(leaves)
	for _, id := range leaves {
		pts = append(pts, plotter.XY{X: xs[id], Y: 0})
	}
	s, err := plotter.NewScatter(pts)
	if err != nil {
		return nil, err
	}
	s.Shape = draw.BoxGlyph{}
	s.Color = inkColour
	s.Radius = vg.Points(2)
	p.Add(s)
	// The cut that leaves cutK clusters lies between the merge to cutK and the one to cutK−1.
	for i, mg := range w.Merges {
		if mg.K == cutK-1 && i > 0 {
			y := (height(i) + height(i-1)) / 2
			l, err := plotter.NewLine(plotter.XYs{{X: -0.5, Y: y}, {X: float64(len(leaves)) - 0.5, Y: y}})
			if err != nil {
				return nil, err
			}
			l.Color = markerColour
			l.Dashes = []vg.Length{vg.Points(4), vg.Points(3)}
			p.Add(l)
			leg.add(fmt.Sprintf("cut that leaves k = %d groups (Ward's vote)", cutK), markerColour, "cut")
		}
	}
	return p, nil
}
