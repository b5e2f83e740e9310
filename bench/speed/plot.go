package speed

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/plotutil"
	"gonum.org/v1/plot/vg"
)

// plotThroughput draws rows/s against rows (16 columns, k = 1..20) for the bare scan and for
// kgauge's pass (its wall time less the criteria stage), one line per worker count, into
// dir/throughput.png.
func plotThroughput(dir string, ms []Measurement) error {
	p := plot.New()
	p.Title.Text = "Throughput against rows (16 float64 columns)"
	p.X.Label.Text, p.Y.Label.Text = "rows in the file", "rows per second"
	p.X.Scale, p.X.Tick.Marker = plot.LogScale{}, plot.LogTicks{Prec: -1}
	p.Y.Scale, p.Y.Tick.Marker = plot.LogScale{}, plot.LogTicks{Prec: -1}
	var args []any
	for _, series := range []struct {
		label, name string
		rate        func(Measurement) float64
	}{
		{"bare-scan", "bare page scan", func(m Measurement) float64 { return float64(m.Rows) / m.Seconds }},
		{"kgauge", "kgauge without criteria", func(m Measurement) float64 { return float64(m.Rows) / (m.Seconds - m.CritSecs) }},
	} {
		for _, w := range []int{1, 2} {
			var xy plotter.XYs
			for _, m := range ms {
				if m.Label == series.label && m.Dims == 16 && m.Workers == w && (m.MaxK == 20 || m.Label == "bare-scan") {
					xy = append(xy, plotter.XY{X: float64(m.Rows), Y: series.rate(m)})
				}
			}
			if len(xy) > 0 {
				args = append(args, fmt.Sprintf("%s, %d worker(s)", series.name, w), xy)
			}
		}
	}
	if len(args) == 0 {
		return nil
	}
	if err := plotutil.AddLinePoints(p, args...); err != nil {
		return err
	}
	p.Legend.Top, p.Legend.Left = true, true
	return p.Save(7*vg.Inch, 5*vg.Inch, filepath.Join(dir, "throughput.png"))
}

// Render rewrites SPEED.md and throughput.png from a saved speed.json without measuring.
func Render(cfg Config) error {
	b, err := os.ReadFile(filepath.Join(cfg.Out, "speed.json"))
	if err != nil {
		return err
	}
	var ms []Measurement
	if err := json.Unmarshal(b, &ms); err != nil {
		return fmt.Errorf("speed.json: %w", err)
	}
	return writeReport(cfg, ms)
}
