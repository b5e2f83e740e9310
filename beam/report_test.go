package beam

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"testing"
	"time"

	abeam "github.com/apache/beam/sdks/v2/go/pkg/beam"
	"github.com/apache/beam/sdks/v2/go/pkg/beam/register"
	"github.com/apache/beam/sdks/v2/go/pkg/beam/testing/ptest"
	"github.com/kgauge/kgauge"
	"github.com/kgauge/kgauge/bench/synth"
)

// reportEnv names the file TestBeamReport writes (bench/beam-report.sh sets it); without it the
// test is skipped, since it takes a minute and measures time.
const reportEnv = "KGAUGE_BEAM_REPORT"

func init() { register.Function1x0(noop) }

// noop is the one step of the pipeline that measures the runner's fixed cost.
func noop(int) {}

// TestBeamReport measures one demo file (invented data) end to end with the plain library
// (Estimate) and with the pipeline on prism, with 1 and 2 cores, and writes the comparison and the
// per-work-item overhead it implies. It asserts only that both paths agree on the verdict.
func TestBeamReport(t *testing.T) {
	out := os.Getenv(reportEnv)
	if out == "" {
		t.Skipf("set %s=FILE to measure and write the report", reportEnv)
	}
	needPrism(t)
	ctx := context.Background()
	root := t.TempDir()
	o := synth.DefaultLoadOptions()
	o.Rows, o.RowGroup, o.Partitions = 200000, 8192, 1
	paths, err := synth.WriteLoads(root, o)
	if err != nil {
		t.Fatal(err)
	}
	opt := testOptions()
	opt.Sketch.CoresetSize = 2000
	const runs = 3
	type row struct {
		name        string
		cores       int
		wall        []float64
		pass, crit  []float64
		k           int
		units, rows int64
	}
	var rows []*row
	var startup []float64 // a pipeline of one element and one step: the runner's fixed cost
	for range runs {
		start := time.Now()
		p, s := abeam.NewPipelineWithRoot()
		abeam.ParDo0(s, noop, abeam.Create(s, 1))
		if err := ptest.Run(p); err != nil {
			t.Fatal(err)
		}
		startup = append(startup, time.Since(start).Seconds())
	}
	procs := runtime.GOMAXPROCS(0)
	defer runtime.GOMAXPROCS(procs)
	for _, cores := range []int{1, 2} {
		runtime.GOMAXPROCS(cores)
		plain := &row{name: "kgauge estimate (library)", cores: cores}
		prism := &row{name: "kgauge-beam on prism", cores: cores}
		for range runs {
			o := opt
			o.Workers = cores
			start := time.Now()
			res, _, err := kgauge.Estimate(ctx, paths, o)
			if err != nil {
				t.Fatal(err)
			}
			plain.wall = append(plain.wall, time.Since(start).Seconds())
			plain.pass = append(plain.pass, res.Timings.Open+res.Timings.Probe+res.Timings.Pass)
			plain.crit = append(plain.crit, res.Timings.Criteria)
			plain.k, plain.rows = res.K, res.Rows

			dir := t.TempDir()
			file := filepath.Join(dir, "result.json")
			start = time.Now()
			plan, err := kgauge.PlanUnits(ctx, paths, opt)
			if err != nil {
				t.Fatal(err)
			}
			p, s := abeam.NewPipelineWithRoot()
			if _, err := Pipeline(s, plan, file, start); err != nil {
				t.Fatal(err)
			}
			if err := ptest.Run(p); err != nil {
				t.Fatal(err)
			}
			prism.wall = append(prism.wall, time.Since(start).Seconds())
			data, err := os.ReadFile(file)
			if err != nil {
				t.Fatal(err)
			}
			got := decodeResult(t, data)
			prism.pass = append(prism.pass, got.Timings.Pass)
			prism.crit = append(prism.crit, got.Timings.Criteria)
			prism.k, prism.rows, prism.units = got.K, got.Rows, int64(len(plan.Units))
		}
		if plain.k != prism.k || plain.rows != prism.rows {
			t.Errorf("%d cores: prism found k=%d over %d rows, the library k=%d over %d", cores, prism.k, prism.rows, plain.k, plain.rows)
		}
		rows = append(rows, plain, prism)
	}
	median := func(v []float64) float64 { s := slices.Clone(v); slices.Sort(s); return s[len(s)/2] }
	var b strings.Builder
	fmt.Fprintf(&b, "# kgauge on Apache Beam (prism) against the plain library\n\n")
	fmt.Fprintf(&b, "Written by `bench/beam-report.sh` (`go test ./beam -run TestBeamReport`); do not edit by hand.\n\n")
	fmt.Fprintf(&b, "One demo partition (invented data: `synth` loads, %d rows, 24 feature columns, row groups of %d rows, %d work items),\n", o.Rows, o.RowGroup, rows[1].units)
	fmt.Fprintf(&b, "options `--max-k 6 --coreset 2000 --gap-refs 5 --gap-sample 500 --anchors 200`. Cores are GOMAXPROCS of the one\n")
	fmt.Fprintf(&b, "test process (prism runs its loopback worker in-process); the library uses as many `--workers`. Seconds, median of %d runs,\n", runs)
	fmt.Fprintf(&b, "measured side by side in one run on a shared 2-core machine (see the developers' performance notes, PERF-NOTES.md, kept beside the repository).\n\n")
	fmt.Fprintf(&b, "| path | cores | wall s | pass s (incl. open, probe) | criteria s | k |\n| --- | --- | --- | --- | --- | --- |\n")
	for _, r := range rows {
		fmt.Fprintf(&b, "| %s | %d | %.2f | %.2f | %.2f | %d |\n", r.name, r.cores, median(r.wall), median(r.pass), median(r.crit), r.k)
	}
	for i := 0; i+1 < len(rows); i += 2 {
		plain, prism := rows[i], rows[i+1]
		extra := median(prism.wall) - median(plain.wall)
		fmt.Fprintf(&b, "\nWith %d core(s) the pipeline took %.2f s more than the library; less the runner's fixed cost that is %.1f ms per work item.\n",
			plain.cores, extra, 1000*(extra-median(startup[1:]))/float64(prism.units))
	}
	fmt.Fprintf(&b, "\nThe runner's fixed cost (a one-element, one-step pipeline on prism): %.2f s for the first pipeline of a process\n", startup[0])
	fmt.Fprintf(&b, "(starting the in-process job service and the loopback worker), %.2f s for the next ones.\n", median(startup[1:]))
	fmt.Fprintf(&b, "The per-work-item cost grows with the sketch sizes: every partial sketch holds up to coreset + sample rows and is\n")
	fmt.Fprintf(&b, "encoded, decoded and merged once.\n")
	fmt.Fprintf(&b, "\n`beam.WorkItemOverhead` and `beam.PipelineStartup` are set from these figures; a plan for W workers adds\n")
	fmt.Fprintf(&b, "units × WorkItemOverhead / W and PipelineStartup to the single-worker pass time divided by W.\n")
	if err := os.WriteFile(out, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	t.Log("\n" + b.String())
}
