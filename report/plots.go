package report

import (
	"bytes"
	"encoding/base64"
	"fmt"
	"html/template"
	"image/color"
	"math"
	"sort"

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

// Figure is one rendered plot: its title, a caption and the SVG as a data URI.
type Figure struct {
	ID      string
	Title   string
	Caption string
	Src     template.URL
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
	p.Legend.TextStyle.Font = font.From(sans, 9)
	p.Legend.Top = true
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

func addLine(p *plot.Plot, xy plotter.XYs, c color.Color, name string, dashed bool) error {
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
		p.Legend.Add(name, l, s)
	}
	return nil
}

// markK draws a ring around the point at k on xy and names it in the legend.
func markK(p *plot.Plot, xy plotter.XYs, k int, label string) error {
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
			p.Legend.Add(label, s)
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
	add := func(id, title, caption string, p *plot.Plot) error {
		src, err := svgURI(p)
		if err != nil {
			return err
		}
		figs = append(figs, Figure{ID: id, Title: title, Caption: caption, Src: src})
		return nil
	}

	// WCSS with the elbow.
	p := newPlot("Within-cluster sum of squares", "k", "WCSS (coreset estimate)")
	wcss := series(perK, func(s criteria.Scores) float64 { return s.WCSS })
	if err := addLine(p, wcss, tealColour, "WCSS", false); err != nil {
		return nil, err
	}
	if k := vote(votes, criteria.NameElbow); k > 0 {
		if err := markK(p, wcss, k, fmt.Sprintf("elbow (Kneedle) at k = %d", k)); err != nil {
			return nil, err
		}
	}
	if err := add("fig-wcss", "WCSS and its elbow", "The ring marks the k the Kneedle rule picks on the WCSS curve.", p); err != nil {
		return nil, err
	}

	// Silhouette with its confidence band.
	p = newPlot("Silhouette", "k", "mean silhouette")
	var band plotter.XYs
	var lower plotter.XYs
	for _, s := range perK {
		if math.IsNaN(s.SilhouetteLo) || math.IsNaN(s.SilhouetteHi) {
			continue
		}
		band = append(band, plotter.XY{X: float64(s.K), Y: s.SilhouetteHi})
		lower = append(lower, plotter.XY{X: float64(s.K), Y: s.SilhouetteLo})
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
		p.Legend.Add("95% interval", poly)
	}
	sil := series(perK, func(s criteria.Scores) float64 { return s.Silhouette })
	if err := addLine(p, sil, tealColour, "anchor estimate", false); err != nil {
		return nil, err
	}
	if err := addLine(p, series(perK, func(s criteria.Scores) float64 { return s.SimplifiedSilhouette }), amberColour, "simplified", true); err != nil {
		return nil, err
	}
	if k := vote(votes, criteria.NameSilhouette); k > 0 {
		if err := markK(p, sil, k, fmt.Sprintf("largest at k = %d", k)); err != nil {
			return nil, err
		}
	}
	if err := add("fig-silhouette", "Silhouette with its confidence band", "The shaded band is the 95% interval of the stratified anchor estimate.", p); err != nil {
		return nil, err
	}

	// Gap statistic, both references, with s_k.
	p = newPlot("Gap statistic", "k", "Gap(k) ± s_k")
	for i, ref := range []struct {
		name   string
		v, s   func(criteria.Scores) float64
		colour color.Color
		vote   string
	}{{"box reference", func(s criteria.Scores) float64 { return s.GapBox }, func(s criteria.Scores) float64 { return s.GapBoxS }, tealColour, criteria.NameGapBox},
		{"PCA-box reference", func(s criteria.Scores) float64 { return s.GapPCA }, func(s criteria.Scores) float64 { return s.GapPCAS }, plumColour, criteria.NameGapPCA}} {
		var pts errPoints
		off := 0.08 * float64(2*i-1) // side by side, so the bars do not hide each other
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
		if err := addLine(p, pts.XYs, ref.colour, ref.name, i == 1); err != nil {
			return nil, err
		}
		eb, err := plotter.NewYErrorBars(pts)
		if err != nil {
			return nil, err
		}
		eb.Color = ref.colour
		p.Add(eb)
		if k := vote(votes, ref.vote); k > 0 {
			shifted := make(plotter.XYs, len(pts.XYs))
			for j, q := range pts.XYs {
				shifted[j] = plotter.XY{X: math.Round(q.X), Y: q.Y}
			}
			if err := markK(p, shifted, k, fmt.Sprintf("%s picks k = %d", ref.name, k)); err != nil {
				return nil, err
			}
		}
	}
	p.Legend.Top = false // the gap rises with k: keep the legend low
	p.Legend.YOffs = vg.Points(4)
	if err := add("fig-gap", "Gap statistic against both references", "Error bars are s_k = sd_k·√(1 + 1/B) over the B reference sets.", p); err != nil {
		return nil, err
	}

	// BIC and AIC of the Gaussian mixtures.
	p = newPlot("Information criteria", "k", "lower is better")
	bic := series(perK, func(s criteria.Scores) float64 { return s.BICGMM })
	if err := addLine(p, bic, tealColour, "BIC (mixture)", false); err != nil {
		return nil, err
	}
	if err := addLine(p, series(perK, func(s criteria.Scores) float64 { return s.AICGMM }), amberColour, "AIC (mixture)", true); err != nil {
		return nil, err
	}
	if k := vote(votes, criteria.NameBICGMM); k > 0 {
		if err := markK(p, bic, k, fmt.Sprintf("BIC lowest at k = %d", k)); err != nil {
			return nil, err
		}
	}
	if err := add("fig-ic", "BIC and AIC of Gaussian mixtures", "Diagonal Gaussian mixtures fitted from each k-means solution.", p); err != nil {
		return nil, err
	}

	// The top of the Ward dendrogram.
	if len(ward.Merges) > 0 {
		p, err := dendrogram(ward, vote(votes, criteria.NameWard))
		if err != nil {
			return nil, err
		}
		if err := add("fig-ward", "Top of the Ward dendrogram",
			fmt.Sprintf("The last %d merges of Ward linkage on %d weighted %s; squares are subtrees merged earlier.",
				len(ward.Merges), ward.Leaves, ward.Source), p); err != nil {
			return nil, err
		}
	}
	return figs, nil
}

// dendrogram draws the last merges of a Ward linkage as a tree: height √(2·cost) as SciPy reports
// it, subtrees formed before the first kept merge drawn as squares on the baseline.
func dendrogram(w criteria.Ward, cutK int) (*plot.Plot, error) {
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
			p.Legend.Add(fmt.Sprintf("cut at k = %d (Ward's vote)", cutK), l)
		}
	}
	return p, nil
}
