package main

import (
	"bufio"
	"bytes"
	"context"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/kgauge/kgauge/bench/synth"
	"github.com/kgauge/kgauge/ledger"
)

// trackLoads are the days of the tracking tests: three archetypes (commuters, home workers,
// night-storage heating), 8,000 meters a day. With the five default archetypes the verdict of an
// 8,000-row day under quickFlags wanders between k = 2 and 8 from day to day, which the k rule
// would rightly call drift; three archetypes keep ordinary days stable.
func trackLoads() synth.LoadOptions {
	o := synth.DefaultLoadOptions()
	o.Rows, o.RowGroup, o.Archetypes, o.Partitions, o.Seed = 8000, 4096, 3, 5, 42
	o.Start = time.Date(2026, 11, 28, 0, 0, 0, 0, time.UTC)
	return o
}

// readLedger reads the ledger's records.
func readLedger(t *testing.T, path string) []ledger.Record {
	t.Helper()
	l, err := ledger.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	return l.Records
}

func mustRead(t *testing.T, path string) []byte {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// TestTrack follows a nightly job: five ordinary days, a rerun with nothing new, a crash, a
// heat-wave day, and the saved sketches merged into the verdict of a direct estimate.
func TestTrack(t *testing.T) {
	root := filepath.Join(t.TempDir(), "loads")
	if _, err := synth.WriteLoads(root, trackLoads()); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "loads.jsonl")
	track := func(extra ...string) (int, string, string) {
		args := append([]string{"track", root, "--ledger", path}, quickFlags...)
		return run(t, append(args, extra...)...)
	}
	days := []string{"day=2026-11-28", "day=2026-11-29", "day=2026-11-30", "day=2026-12-01", "day=2026-12-02"}

	t.Run("OrdinaryDays", func(t *testing.T) {
		code, out, errs := track()
		if code != ExitOK {
			t.Fatalf("exit %d, want 0: %s%s", code, out, errs)
		}
		lines := strings.Split(strings.TrimSpace(out), "\n")
		if len(lines) != len(days) {
			t.Fatalf("%d output lines, want %d:\n%s", len(lines), len(days), out)
		}
		recs := readLedger(t, path)
		if len(recs) != len(days) {
			t.Fatalf("ledger has %d records, want %d", len(recs), len(days))
		}
		for i, r := range recs {
			if r.Partition != days[i] || !strings.HasPrefix(lines[i], days[i]+" ") {
				t.Errorf("record %d is %s, line %q; want %s", i, r.Partition, lines[i], days[i])
			}
			if r.Drift.Drifted || !strings.HasSuffix(lines[i], " ok") {
				t.Errorf("ordinary %s flagged: %v (%q)", r.Partition, r.Drift.Reasons, lines[i])
			}
			// The generator used three archetypes.
			if r.K != 3 {
				t.Errorf("%s: k %d, want 3", r.Partition, r.K)
			}
			if r.Schema != ledger.SchemaVersion || r.Rows+r.SkippedRows != 8000 || len(r.PerK) != 8 ||
				len(r.Files) != 1 || r.Files[0].Path != days[i]+"/part-000.parquet" || r.Version == "" {
				t.Errorf("%s: schema %d, rows %d+%d, %d per-k, files %v, version %q", r.Partition, r.Schema,
					r.Rows, r.SkippedRows, len(r.PerK), r.Files, r.Version)
			}
			if len(r.PartitionValues) != 1 || r.PartitionValues[0].Key != "day" {
				t.Errorf("%s: partition values %v", r.Partition, r.PartitionValues)
			}
			want := "loads.jsonl.sketches/" + days[i] + ".kgs"
			st, err := os.Stat(filepath.Join(filepath.Dir(path), want))
			if r.Sketch != want || err != nil || st.Size() != r.SketchBytes {
				t.Errorf("%s: sketch %q (%d bytes), want %q: %v", r.Partition, r.Sketch, r.SketchBytes, want, err)
			}
			if i >= 3 && (r.Drift.WindowK == nil || len(r.Drift.Window) != i) {
				t.Errorf("%s: window %v, window k %v; want the %d days before", r.Partition, r.Drift.Window, r.Drift.WindowK, i)
			}
		}
	})

	t.Run("NothingNew", func(t *testing.T) {
		before := mustRead(t, path)
		code, out, errs := track()
		if code != ExitOK || out != "" {
			t.Fatalf("exit %d, stdout %q, want 0 and nothing: %s", code, out, errs)
		}
		if !bytes.Equal(mustRead(t, path), before) {
			t.Error("a run with nothing new changed the ledger")
		}
	})

	t.Run("Merge", func(t *testing.T) {
		// The saved sketches of the five days against one pass over the same five directories.
		var sketches, dirs []string
		for _, d := range days {
			sketches = append(sketches, filepath.Join(filepath.Dir(path), "loads.jsonl.sketches", d+".kgs"))
			dirs = append(dirs, filepath.Join(root, d))
		}
		estimate := func(inputs []string) map[string]any {
			code, out, errs := run(t, append(append([]string{"estimate", "--json"}, quickFlags...), inputs...)...)
			if code != 0 {
				t.Fatalf("estimate %v: exit %d: %s", inputs, code, errs)
			}
			return stripTimings(t, out)
		}
		merged, direct := estimate(sketches), estimate(dirs)
		for _, f := range []string{"k", "rows", "skipped_rows", "columns"} {
			if !equalJSON(merged[f], direct[f]) {
				t.Errorf("%s: merged sketches %v, direct estimate %v", f, merged[f], direct[f])
			}
		}
		// WCSS at the verdict's k is a coreset estimate on both sides; 10 % is our tolerance for it.
		if k, ok := direct["k"].(float64); ok {
			wm, wd := wcssAt(merged, int(k)), wcssAt(direct, int(k))
			if !(math.Abs(wm-wd) <= 0.1*wd) {
				t.Errorf("WCSS at k %v: merged %v, direct %v (more than 10 %% apart)", k, wm, wd)
			}
		}
	})

	t.Run("CrashRedo", func(t *testing.T) {
		// A crash mid-write by a non-atomic writer: the last record is cut in half, and a
		// temporary ledger file is left behind.
		data := mustRead(t, path)
		last := bytes.LastIndexByte(data[:len(data)-1], '\n') + 1
		os.WriteFile(path, data[:last+(len(data)-last)/2], 0o644)
		tmp := filepath.Join(filepath.Dir(path), ".loads.jsonl.tmp-crash")
		os.WriteFile(tmp, []byte("partial"), 0o644)
		code, out, errs := track()
		if code != ExitOK {
			t.Fatalf("exit %d: %s", code, errs)
		}
		if !strings.Contains(errs, "line 5") || !strings.Contains(errs, tmp) {
			t.Errorf("stderr does not report the remnant at line 5 and the removed %s:\n%s", tmp, errs)
		}
		if lines := strings.Split(strings.TrimSpace(out), "\n"); len(lines) != 1 || !strings.HasPrefix(lines[0], days[4]+" ") {
			t.Errorf("redone: %q, want one line for %s", out, days[4])
		}
		if _, err := os.Stat(tmp); !os.IsNotExist(err) {
			t.Errorf("%s still there", tmp)
		}
		if recs := readLedger(t, path); len(recs) != 5 || recs[4].Partition != days[4] {
			t.Errorf("ledger after the redo has %d records", len(recs))
		}
	})

	t.Run("CorruptLine", func(t *testing.T) {
		good := mustRead(t, path)
		lines := strings.SplitAfter(string(good), "\n")
		lines[2] = `{"schema": 1, "partition": "day=2026-11-30", "k": ` + "\n"
		bad := []byte(strings.Join(lines, ""))
		os.WriteFile(path, bad, 0o644)
		code, _, errs := track()
		if code != ExitInput || !strings.Contains(errs, path+":3:") {
			t.Errorf("exit %d, stderr %q; want 3 and %s:3:", code, errs, path)
		}
		if !bytes.Equal(mustRead(t, path), bad) {
			t.Error("the corrupt ledger was rewritten")
		}
		os.WriteFile(path, good, 0o644)
	})

	t.Run("Locked", func(t *testing.T) {
		l, err := ledger.Lock(context.Background(), path, 0)
		if err != nil {
			t.Fatal(err)
		}
		defer l.Unlock()
		code, _, errs := track()
		if code != ExitInput || !strings.Contains(errs, path+".lock") || !strings.Contains(errs, "--lock-wait") {
			t.Errorf("exit %d, stderr %q; want 3 naming %s.lock and --lock-wait", code, errs, path)
		}
		code, _, errs = track("--lock-wait", "200ms")
		if code != ExitInput || !strings.Contains(errs, "waited 200ms") {
			t.Errorf("with --lock-wait 200ms: exit %d, stderr %q", code, errs)
		}
	})

	t.Run("HeatWave", func(t *testing.T) {
		o := trackLoads()
		o.Partitions, o.HeatWave, o.Seed = 1, 0.25, 43
		o.Start = time.Date(2026, 12, 5, 0, 0, 0, 0, time.UTC)
		if _, err := synth.WriteLoads(root, o); err != nil {
			t.Fatal(err)
		}
		code, out, errs := track("--json")
		if code != ExitDrift {
			t.Fatalf("exit %d, want %d (drift): %s%s", code, ExitDrift, out, errs)
		}
		sc := bufio.NewScanner(strings.NewReader(out))
		sc.Buffer(nil, 1<<20)
		var got []ledger.Record
		for sc.Scan() {
			var r ledger.Record
			if err := json.Unmarshal(sc.Bytes(), &r); err != nil {
				t.Fatalf("--json line is not a record: %v", err)
			}
			got = append(got, r)
		}
		if len(got) != 1 || got[0].Partition != "day=2026-12-05" {
			t.Fatalf("--json printed %d records, want the heat-wave day", len(got))
		}
		recs := readLedger(t, path)
		r := recs[len(recs)-1]
		var rules []string
		for _, x := range r.Drift.Reasons {
			rules = append(rules, x.Rule)
		}
		// The heat wave adds an archetype: k moves from 3 and WCSS at k 3 rises.
		if !r.Drift.Drifted || !slices.Contains(rules, ledger.RuleKChanged) || !slices.Contains(rules, ledger.RuleWCSSRise) {
			t.Errorf("heat-wave day: drifted %v, rules %v; want k_changed and wcss_rise", r.Drift.Drifted, rules)
		}
		if r.Drift.WindowK == nil || *r.Drift.WindowK != 3 || len(r.Drift.Window) != 5 {
			t.Errorf("window %v, k %v; want the five ordinary days and k 3", r.Drift.Window, r.Drift.WindowK)
		}
		for _, old := range recs[:len(recs)-1] {
			if old.Drift.Drifted {
				t.Errorf("ordinary %s flagged", old.Partition)
			}
		}
		if code, out, _ := track(); code != ExitOK || out != "" {
			t.Errorf("rerun after the drift: exit %d, stdout %q; want 0 and nothing", code, out)
		}
	})
}

func equalJSON(a, b any) bool {
	x, _ := json.Marshal(a)
	y, _ := json.Marshal(b)
	return bytes.Equal(x, y)
}

func wcssAt(m map[string]any, k int) float64 {
	perK, _ := m["per_k"].([]any)
	for _, p := range perK {
		if s, ok := p.(map[string]any); ok && s["k"] == float64(k) {
			if w, ok := s["wcss"].(float64); ok {
				return w
			}
		}
	}
	return math.NaN()
}

func TestTrackUsage(t *testing.T) {
	root := t.TempDir()
	led := filepath.Join(t.TempDir(), "l.jsonl")
	for _, tc := range []struct {
		name string
		args []string
		want string
	}{
		{"NoRoot", []string{"track", "--ledger", led}, "no ROOT"},
		{"NoLedger", []string{"track", root}, "--ledger is required"},
		{"TwoRoots", []string{"track", root, root, "--ledger", led}, "one ROOT"},
		{"SaveSketch", []string{"track", root, "--ledger", led, "--save-sketch", "x.kgs"}, "--save-sketch"},
		{"Out", []string{"track", root, "--ledger", led, "--out", "x.json"}, "--out"},
		{"Window", []string{"track", root, "--ledger", led, "--window", "0"}, "--window"},
		{"MinHistory", []string{"track", root, "--ledger", led, "--window", "2", "--min-history", "3"}, "--min-history"},
		{"Agreement", []string{"track", root, "--ledger", led, "--min-agreement", "2"}, "--min-agreement"},
		{"Rise", []string{"track", root, "--ledger", led, "--wcss-rise", "-0.1"}, "--wcss-rise"},
		{"LockWait", []string{"track", root, "--ledger", led, "--lock-wait", "-1s"}, "--lock-wait"},
		{"EstimateFlag", []string{"track", root, "--ledger", led, "--max-k", "0"}, "--max-k"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			code, _, errs := run(t, tc.args...)
			if code != ExitUsage || !strings.Contains(errs, tc.want) {
				t.Errorf("exit %d, stderr %q; want 2 and %q", code, errs, tc.want)
			}
		})
	}
	// Bad input: a root without partitions, a ledger in a missing directory.
	if code, _, errs := run(t, "track", root, "--ledger", led); code != ExitInput || !strings.Contains(errs, root) {
		t.Errorf("empty root: exit %d, stderr %q; want 3 naming %s", code, errs, root)
	}
	missing := filepath.Join(t.TempDir(), "no", "l.jsonl")
	if code, _, errs := run(t, "track", root, "--ledger", missing); code != ExitOutput || !strings.Contains(errs, missing) {
		t.Errorf("ledger in a missing directory: exit %d, stderr %q; want 4", code, errs)
	}
}
