package speed

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"syscall"
	"time"
)

// Config says what Run measures.
type Config struct {
	Out      string // report directory
	Work     string // where generated files go (deleted afterwards)
	Repeats  int
	Quick    bool
	Python   string // python3 with scikit-learn, or "" to skip the reference library
	SkRows   int    // rows of the scikit-learn comparison
	KeepData bool
	Points   string // directory of the published point sets (birch1.txt…) for the targets
	Sections string // comma-separated: rows, columns, sklearn, targets; "all" (default) for every one
}

// sections are the parts of a run, in order.
var sections = []string{"rows", "columns", "sklearn", "targets"}

// wants reports whether the run measures section s.
func (c Config) wants(s string) bool {
	if c.Sections == "" || c.Sections == "all" {
		return true
	}
	for _, x := range strings.Split(c.Sections, ",") {
		if strings.TrimSpace(x) == s {
			return true
		}
	}
	return false
}

// Register binds the flags of "kgauge-speed run".
func (c *Config) Register(fs *flag.FlagSet) {
	fs.StringVar(&c.Out, "out", "bench/report", "report directory")
	fs.StringVar(&c.Work, "work", os.TempDir(), "directory for the generated files")
	fs.IntVar(&c.Repeats, "repeats", 3, "runs per measurement (the median is reported)")
	fs.BoolVar(&c.Quick, "quick", false, "small sizes only (a smoke test of the harness)")
	fs.StringVar(&c.Python, "python", "/usr/bin/python3", "python3 with scikit-learn for the reference fits (empty: skip)")
	fs.IntVar(&c.SkRows, "sklearn-rows", 10_000_000, "rows of the scikit-learn comparison")
	fs.BoolVar(&c.KeepData, "keep", false, "keep the generated files")
	fs.StringVar(&c.Points, "points", "../shared/data", "directory holding birch1.txt, birch2.txt, birch3.txt (Fränti's Birch sets)")
	fs.StringVar(&c.Sections, "sections", "all", "what to measure: all, or some of "+strings.Join(sections, ",")+
		" (the other sections' figures are kept from DIR/speed.json)")
}

// Measurement is one timed child process.
type Measurement struct {
	Label     string    `json:"label"`
	Section   string    `json:"section"`       // rows, columns, sklearn or targets
	Target    string    `json:"target"`        // the issue-15 target a targets measurement is for
	Input     string    `json:"input"`         // what was read, when not a generated mixture
	ProbeSecs float64   `json:"probe_seconds"` // kgauge's own probe timing (median)
	Rows      int       `json:"rows"`
	Dims      int       `json:"dims"`
	MaxK      int       `json:"max_k"`
	Workers   int       `json:"workers"`
	Seconds   float64   `json:"seconds"`      // wall, median over repeats
	PassSecs  float64   `json:"pass_seconds"` // kgauge's own pass timing (median), 0 for others
	CritSecs  float64   `json:"criteria_seconds"`
	PeakRSS   int64     `json:"peak_rss_bytes"` // max over repeats
	OwnCPU    float64   `json:"own_cpu"`        // user+sys seconds / wall seconds (median)
	OtherLoad float64   `json:"other_load"`     // CPUs used by other processes during the runs (median)
	K         int       `json:"k,omitempty"`
	All       []float64 `json:"all_seconds"`
}

// child runs a command, returning its wall time, peak RSS, CPU and stdout; other-load is the CPU
// time the rest of the machine used meanwhile, from /proc/stat.
func child(ctx context.Context, name string, args ...string) (wall, cpu, other float64, rss int64, out []byte, err error) {
	cmd := exec.CommandContext(ctx, name, args...)
	var stdout, stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	busy0, _ := busyTicks()
	start := time.Now()
	err = cmd.Run()
	wall = time.Since(start).Seconds()
	busy1, _ := busyTicks()
	if err != nil {
		return 0, 0, 0, 0, nil, fmt.Errorf("%s %s: %v: %s", name, strings.Join(args, " "), err, stderr.String())
	}
	ru := cmd.ProcessState.SysUsage().(*syscall.Rusage)
	own := time.Duration(ru.Utime.Nano() + ru.Stime.Nano()).Seconds()
	other = ((busy1-busy0)/100 - own) / wall // USER_HZ = 100
	if other < 0 {
		other = 0
	}
	return wall, own / wall, other, ru.Maxrss * 1024, stdout.Bytes(), nil
}

// busyTicks returns the machine's non-idle CPU time in USER_HZ ticks.
func busyTicks() (float64, error) {
	b, err := os.ReadFile("/proc/stat")
	if err != nil {
		return 0, err
	}
	line := strings.SplitN(string(b), "\n", 2)[0]
	f := strings.Fields(line)
	var busy float64
	for i, v := range f[1:] {
		x, _ := strconv.ParseFloat(v, 64)
		if i == 3 || i == 4 { // idle, iowait
			continue
		}
		busy += x
	}
	return busy, nil
}

func median(v []float64) float64 {
	s := slices.Clone(v)
	slices.Sort(s)
	if len(s) == 0 {
		return 0
	}
	return s[len(s)/2]
}

// measure repeats a child run and keeps medians.
func measure(ctx context.Context, cfg Config, m Measurement, parse func([]byte, *Measurement), name string, args ...string) (Measurement, error) {
	var walls, cpus, others, passes, crits, probes []float64
	for range cfg.Repeats {
		wall, cpu, other, rss, out, err := child(ctx, name, args...)
		if err != nil {
			return m, err
		}
		walls = append(walls, wall)
		cpus = append(cpus, cpu)
		others = append(others, other)
		m.PeakRSS = max(m.PeakRSS, rss)
		if parse != nil {
			parse(out, &m)
			passes = append(passes, m.PassSecs)
			crits = append(crits, m.CritSecs)
			probes = append(probes, m.ProbeSecs)
		}
	}
	m.Seconds, m.OwnCPU, m.OtherLoad = median(walls), median(cpus), median(others)
	m.PassSecs, m.CritSecs, m.ProbeSecs = median(passes), median(crits), median(probes)
	m.All = walls
	return m, nil
}

func parseEstimate(out []byte, m *Measurement) {
	var r struct {
		K       int `json:"k"`
		Timings struct {
			Probe    float64 `json:"probe_seconds"`
			Pass     float64 `json:"pass_seconds"`
			Criteria float64 `json:"criteria_seconds"`
		} `json:"timings"`
	}
	if json.Unmarshal(out, &r) == nil {
		m.K, m.PassSecs, m.CritSecs, m.ProbeSecs = r.K, r.Timings.Pass, r.Timings.Criteria, r.Timings.Probe
	}
}

// Run builds the binaries, generates the files, measures and writes SPEED.md and speed.json.
func Run(ctx context.Context, cfg Config, log io.Writer) error {
	if cfg.Repeats < 1 {
		cfg.Repeats = 1
	}
	work, err := os.MkdirTemp(cfg.Work, "kgauge-speed-")
	if err != nil {
		return err
	}
	if !cfg.KeepData {
		defer os.RemoveAll(work)
	}
	bin := filepath.Join(work, "bin")
	for _, b := range []string{"kgauge", "kgauge-speed"} {
		cmd := exec.CommandContext(ctx, "go", "build", "-o", filepath.Join(bin, b), "./cmd/"+b)
		cmd.Stderr = log
		if err := cmd.Run(); err != nil {
			return fmt.Errorf("build %s: %w", b, err)
		}
	}
	kg, sp := filepath.Join(bin, "kgauge"), filepath.Join(bin, "kgauge-speed")
	file := func(rows, dims int) (string, error) {
		p := filepath.Join(work, fmt.Sprintf("mix-%d-%d.parquet", rows, dims))
		if _, err := os.Stat(p); err == nil {
			return p, nil
		}
		fmt.Fprintf(log, "speed: writing %s\n", p)
		cmd := exec.CommandContext(ctx, sp, "gen", "--rows", fmt.Sprint(rows), "--dims", fmt.Sprint(dims), "--out", p)
		cmd.Stderr = log
		return p, cmd.Run()
	}
	rowsLadder := []int{1_000_000, 5_000_000, 20_000_000, 50_000_000}
	dimsLadder := []int{4, 16, 64}
	kLadder := []int{10, 20, 40}
	mid := 5_000_000
	if cfg.Quick {
		rowsLadder, dimsLadder, kLadder, mid = []int{200_000, 1_000_000}, []int{4, 16}, []int{10, 20}, 200_000
	}
	var ms []Measurement
	add := func(m Measurement, err error) error {
		if err != nil {
			return err
		}
		fmt.Fprintf(log, "speed: %-10s rows=%d d=%d maxk=%d w=%d  %.3fs (pass %.3fs, criteria %.3fs) rss %.0f MiB other-load %.2f\n",
			m.Label, m.Rows, m.Dims, m.MaxK, m.Workers, m.Seconds, m.PassSecs, m.CritSecs, float64(m.PeakRSS)/(1<<20), m.OtherLoad)
		ms = append(ms, m)
		return nil
	}
	section, target, input, repeats := "", "", "", cfg.Repeats
	est := func(path string, rows, dims, maxK, workers int, extra ...string) error {
		m := Measurement{Label: "kgauge", Section: section, Target: target, Input: input, Rows: rows, Dims: dims, MaxK: maxK, Workers: workers}
		args := append([]string{"estimate", "--json", "--quiet", "--max-k", fmt.Sprint(maxK), "--workers", fmt.Sprint(workers)}, extra...)
		return add(measure(ctx, Config{Repeats: repeats}, m, parseEstimate, kg, append(args, path)...))
	}
	scan := func(path string, rows, dims, workers int) error {
		m := Measurement{Label: "bare-scan", Section: section, Target: target, Input: input, Rows: rows, Dims: dims, Workers: workers}
		return add(measure(ctx, Config{Repeats: repeats}, m, nil, sp, "scan", "--workers", fmt.Sprint(workers), path))
	}
	gen := func(path string, args ...string) error {
		if _, err := os.Stat(path); err == nil {
			return nil
		}
		fmt.Fprintf(log, "speed: writing %s\n", path)
		cmd := exec.CommandContext(ctx, sp, append(args, "--out", path)...)
		cmd.Stderr = log
		return cmd.Run()
	}
	if cfg.wants("rows") {
		// Rows ladder, 16 columns, k = 1..20, 1 and 2 workers, beside the bare scan.
		section = "rows"
		for _, rows := range rowsLadder {
			p, err := file(rows, 16)
			if err != nil {
				return err
			}
			for _, w := range []int{1, 2} {
				if err := scan(p, rows, 16, w); err != nil {
					return err
				}
				if err := est(p, rows, 16, 20, w); err != nil {
					return err
				}
			}
			if rows > mid && !cfg.KeepData {
				os.Remove(p)
			}
		}
	}
	if cfg.wants("columns") {
		// Columns ladder and k ladder at the middle size, 2 workers.
		section = "columns"
		for _, d := range dimsLadder {
			if d == 16 {
				continue
			}
			p, err := file(mid, d)
			if err != nil {
				return err
			}
			if err := scan(p, mid, d, 2); err != nil {
				return err
			}
			if err := est(p, mid, d, 20, 2); err != nil {
				return err
			}
			os.Remove(p)
		}
		p, err := file(mid, 16)
		if err != nil {
			return err
		}
		for _, k := range kLadder {
			if k == 20 {
				continue
			}
			if err := est(p, mid, 16, k, 2); err != nil {
				return err
			}
		}
	}
	if cfg.wants("sklearn") {
		sk, err := sklearn(ctx, cfg, work, sp, kg, log)
		if err != nil {
			fmt.Fprintf(log, "speed: scikit-learn comparison skipped: %v\n", err)
		}
		for i := range sk {
			sk[i].Section = "sklearn"
		}
		ms = append(ms, sk...)
	}
	if cfg.wants("targets") {
		// Issue 15's targets, each beside the bare scan of its file, 2 workers.
		section = "targets"
		big, wide, vec := 1_000_000, 100_000, 100_000
		if cfg.Quick {
			big, wide, vec = 200_000, 20_000, 20_000
		}
		type job struct {
			target, input string
			run           func() error
		}
		// measured generates a file with "kgauge-speed gen" args, then measures the bare scan and
		// the estimate (with extra flags) on it; keep leaves the file for a later job.
		measured := func(name string, rows, dims, maxK int, keep bool, genArgs []string, extra ...string) func() error {
			return func() error {
				p := filepath.Join(work, name+".parquet")
				args := append([]string{"gen", "--rows", fmt.Sprint(rows), "--dims", fmt.Sprint(dims)}, genArgs...)
				if err := gen(p, args...); err != nil {
					return err
				}
				if !keep {
					defer os.Remove(p)
				}
				return errors.Join(scan(p, rows, dims, 2), est(p, rows, dims, maxK, 2, extra...))
			}
		}
		name16 := fmt.Sprintf("t-%d-16", big)
		jobs := []job{
			{"criteria-16", "", measured(name16, big, 16, 20, true, nil)},
			{"maxk-50", "", func() error { return est(filepath.Join(work, name16+".parquet"), big, 16, 50, 2) }},
			{"criteria-64", "", measured(fmt.Sprintf("t-%d-64", big), big, 64, 20, false, []string{"--k", "16"})},
			{"criteria-512", "", measured(fmt.Sprintf("t-%d-512", wide), wide, 512, 20, false, []string{"--k", "16"})},
			{"vector-768", "one list<float32> column of 768 values", measured(fmt.Sprintf("t-%d-vec768", vec), vec, 768, 20, false,
				[]string{"--k", "16", "--vector", "emb"}, "--columns", "emb")},
		}
		for _, name := range []string{"birch1", "birch2", "birch3"} {
			src := filepath.Join(cfg.Points, name+".txt")
			if _, err := os.Stat(src); err != nil || cfg.Quick {
				fmt.Fprintf(log, "speed: %s skipped (%s not found, or --quick)\n", name, src)
				continue
			}
			jobs = append(jobs, job{name, "Fränti & Sieranoja's " + name + " (100 clusters), --max-k 110", func() error {
				p := filepath.Join(work, name+".parquet")
				if err := gen(p, "gen-points", "--in", src); err != nil {
					return err
				}
				defer os.Remove(p)
				repeats = 1 // a whole run at max-k 110 is long; one run each
				defer func() { repeats = cfg.Repeats }()
				return errors.Join(scan(p, 100_000, 2, 2), est(p, 100_000, 2, 110, 2))
			}})
		}
		if !cfg.Quick {
			jobs = append(jobs, job{"whole-20M", "", measured("t-20000000-16", 20_000_000, 16, 20, false, nil)})
		}
		for _, j := range jobs {
			target, input = j.target, j.input
			if err := j.run(); err != nil {
				return fmt.Errorf("target %s: %w", j.target, err)
			}
		}
		target, input = "", ""
	}
	if cfg.Sections != "" && cfg.Sections != "all" {
		// Keep the figures of the sections not measured now.
		kept, err := readMeasurements(filepath.Join(cfg.Out, "speed.json"))
		if err != nil {
			return fmt.Errorf("--sections %s keeps the other figures from %s: %w", cfg.Sections, cfg.Out, err)
		}
		var old []Measurement
		for _, m := range kept {
			if !cfg.wants(m.Section) {
				old = append(old, m)
			}
		}
		ms = append(old, ms...)
	}
	return writeReport(cfg, ms)
}

// readMeasurements reads a speed.json; measurements written before sections existed get theirs
// from their shape.
func readMeasurements(path string) ([]Measurement, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var ms []Measurement
	if err := json.Unmarshal(b, &ms); err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	for i, m := range ms {
		if m.Section != "" {
			continue
		}
		switch {
		case strings.Contains(m.Label, "sklearn"):
			ms[i].Section = "sklearn"
		case m.Dims != 16 || m.Label == "kgauge" && m.MaxK != 20:
			ms[i].Section = "columns"
		default:
			ms[i].Section = "rows"
		}
	}
	return ms, nil
}

func machine() string {
	mem := ""
	if b, err := os.ReadFile("/proc/meminfo"); err == nil {
		mem = strings.TrimSpace(strings.SplitN(string(b), "\n", 2)[0])
	}
	cpu := ""
	if b, err := os.ReadFile("/proc/cpuinfo"); err == nil {
		for _, l := range strings.Split(string(b), "\n") {
			if strings.HasPrefix(l, "model name") {
				cpu = strings.TrimSpace(strings.SplitN(l, ":", 2)[1])
				break
			}
		}
	}
	return fmt.Sprintf("%d CPUs (%s), %s, %s %s/%s", runtime.NumCPU(), cpu, mem, runtime.Version(), runtime.GOOS, runtime.GOARCH)
}
