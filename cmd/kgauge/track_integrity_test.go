package main

import (
	"bytes"
	"context"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/kgauge/kgauge/bench/synth"
	"github.com/kgauge/kgauge/internal/atomicfile"
	"github.com/kgauge/kgauge/ledger"
)

// The track cases of issue 13: a partition is done only when every file of it was read, a failed
// or incomplete partition is retried, a partition can be quarantined, a missing sketch is rebuilt,
// and the ledger goes by its real file.

// integrityDays writes n days of 3,000 meters (three archetypes) under a new root and returns it and
// the day keys.
func integrityDays(t *testing.T, n int) (string, []string) {
	t.Helper()
	o := synth.DefaultLoadOptions()
	o.Rows, o.RowGroup, o.Archetypes, o.Partitions, o.Seed = 3000, 1500, 3, n, 7
	o.Start = time.Date(2026, 11, 28, 0, 0, 0, 0, time.UTC)
	root := filepath.Join(t.TempDir(), "loads")
	if _, err := synth.WriteLoads(root, o); err != nil {
		t.Fatal(err)
	}
	var days []string
	for i := range n {
		days = append(days, "day="+o.Start.AddDate(0, 0, i).Format("2006-01-02"))
	}
	return root, days
}

// latestByPartition returns the latest record of each partition in the ledger.
func latestByPartition(t *testing.T, path string) map[string]ledger.Record {
	t.Helper()
	m := map[string]ledger.Record{}
	for _, r := range readLedger(t, path) {
		m[r.Partition] = r
	}
	return m
}

func integrityTrack(t *testing.T, root, led string, extra ...string) (int, string, string) {
	t.Helper()
	args := append([]string{"track", root, "--ledger", led}, quickFlags...)
	return run(t, append(args, extra...)...)
}

// TestTrackUnreadableFile: a truncated second file in a day fails that day (exit 3 naming the file
// and the partition), is recorded as failed, and stops the run; once the file is repaired the
// next run profiles the day with both files. With --skip-unreadable the day is recorded
// incomplete with its skipped file, the later days are profiled, the run exits 3 naming it, and
// the next run profiles it again. (It used to be recorded done with half its rows, for good.)
func TestTrackUnreadableFile(t *testing.T) {
	root, days := integrityDays(t, 3)
	good := mustRead(t, filepath.Join(root, days[1], "part-000.parquet"))
	second := filepath.Join(root, days[1], "part-001.parquet")
	os.WriteFile(second, good[:len(good)/2], 0o644)
	led := filepath.Join(t.TempDir(), "loads.jsonl")

	code, _, errs := integrityTrack(t, root, led)
	if code != ExitInput || !strings.Contains(errs, second) || !strings.Contains(errs, days[1]) || !strings.Contains(errs, "--quarantine") {
		t.Fatalf("exit %d, stderr %q; want 3 naming %s and %s", code, errs, second, days[1])
	}
	m := latestByPartition(t, led)
	if m[days[0]].Status != ledger.StatusDone || m[days[1]].Status != ledger.StatusFailed || !strings.Contains(m[days[1]].Error, "part-001.parquet") {
		t.Errorf("states %q %q (%q); want done, failed naming the file", m[days[0]].Status, m[days[1]].Status, m[days[1]].Error)
	}
	if _, ok := m[days[2]]; ok {
		t.Errorf("%s profiled after the failure before it", days[2])
	}

	// --skip-unreadable: incomplete, listed, the day after it profiled, exit 3.
	code, out, errs := integrityTrack(t, root, led, "--skip-unreadable")
	if code != ExitInput || !strings.Contains(errs, "incomplete") || !strings.Contains(errs, days[1]) {
		t.Errorf("--skip-unreadable: exit %d, stderr %q; want 3 naming the incomplete %s", code, errs, days[1])
	}
	if !strings.Contains(out, days[1]+"  k ") || !strings.Contains(out, "INCOMPLETE") {
		t.Errorf("no incomplete line for %s:\n%s", days[1], out)
	}
	m = latestByPartition(t, led)
	r := m[days[1]]
	if r.Status != ledger.StatusIncomplete || len(r.SkippedFiles) != 1 || r.SkippedFiles[0].Path != days[1]+"/part-001.parquet" || r.Rows+r.SkippedRows != 3000 {
		t.Errorf("%s: status %q, skipped %v, rows %d; want incomplete, the cut file, 3000 rows", days[1], r.Status, r.SkippedFiles, r.Rows+r.SkippedRows)
	}
	if m[days[2]].Status != ledger.StatusDone {
		t.Errorf("%s: %q, want done", days[2], m[days[2]].Status)
	}

	// Repaired: the next run profiles the day again, from both files, and is done.
	os.WriteFile(second, good, 0o644)
	code, out, errs = integrityTrack(t, root, led)
	if code != ExitOK || strings.Count(out, "\n") != 1 || !strings.HasPrefix(out, days[1]+" ") {
		t.Fatalf("after the repair: exit %d, stdout %q: %s", code, out, errs)
	}
	r = latestByPartition(t, led)[days[1]]
	if r.Status != ledger.StatusDone || len(r.Files) != 2 || r.Rows+r.SkippedRows != 6000 {
		t.Errorf("repaired %s: status %q, %d files, %d rows; want done, 2, 6000", days[1], r.Status, len(r.Files), r.Rows+r.SkippedRows)
	}
	if code, out, _ := integrityTrack(t, root, led); code != ExitOK || out != "" {
		t.Errorf("rerun: exit %d, stdout %q; want 0 and nothing", code, out)
	}
}

// TestTrackQuarantine: a day with a broken footer fails every run and blocks the days after it;
// --quarantine sets it aside with a ledger entry, the later days are profiled, and the run (and
// every later one, without the flag) exits 3 naming it; --release profiles it again.
func TestTrackQuarantine(t *testing.T) {
	root, days := integrityDays(t, 4)
	file := filepath.Join(root, days[1], "part-000.parquet")
	good := mustRead(t, file)
	bad := bytes.Clone(good)
	for i := len(bad) - 300; i < len(bad)-8; i++ {
		bad[i] = 0x33
	}
	os.WriteFile(file, bad, 0o644)
	led := filepath.Join(t.TempDir(), "loads.jsonl")
	for range 2 {
		if code, _, errs := integrityTrack(t, root, led); code != ExitInput || !strings.Contains(errs, days[1]) {
			t.Fatalf("exit %d, stderr %q; want 3 naming %s", code, errs, days[1])
		}
	}
	if _, ok := latestByPartition(t, led)[days[2]]; ok {
		t.Fatalf("%s profiled past the failing day", days[2])
	}
	if code, _, errs := integrityTrack(t, root, led, "--quarantine", "day=1999-01-01"); code != ExitUsage || !strings.Contains(errs, "day=1999-01-01") {
		t.Errorf("quarantine of no partition: exit %d, stderr %q; want 2", code, errs)
	}
	code, out, errs := integrityTrack(t, root, led, "--quarantine", days[1])
	if code != ExitInput || !strings.Contains(errs, "quarantined") || !strings.Contains(errs, days[1]) {
		t.Errorf("exit %d, stderr %q; want 3 naming the quarantined %s", code, errs, days[1])
	}
	if !strings.Contains(out, days[1]+"  QUARANTINED") {
		t.Errorf("no quarantine line:\n%s", out)
	}
	m := latestByPartition(t, led)
	for _, d := range days[2:] {
		if m[d].Status != ledger.StatusDone {
			t.Errorf("%s: %q, want done past the quarantined day", d, m[d].Status)
		}
	}
	if m[days[1]].Status != ledger.StatusQuarantined {
		t.Errorf("%s: %q, want quarantined", days[1], m[days[1]].Status)
	}
	before := len(readLedger(t, led))
	code, out, errs = integrityTrack(t, root, led)
	if code != ExitInput || out != "" || !strings.Contains(errs, "quarantined") || len(readLedger(t, led)) != before {
		t.Errorf("later run: exit %d, stdout %q, stderr %q; want 3, no new record", code, out, errs)
	}
	os.WriteFile(file, good, 0o644)
	code, out, errs = integrityTrack(t, root, led, "--release", days[1])
	if code != ExitOK || !strings.HasPrefix(out, days[1]+"  k ") || latestByPartition(t, led)[days[1]].Status != ledger.StatusDone {
		t.Errorf("--release: exit %d, stdout %q: %s", code, out, errs)
	}
}

// TestTrackRebuildsMissingSketch: a done day whose saved sketch was deleted is profiled again and
// its sketch saved (it used to stay missing for good). A sketch that cannot be saved (full disk)
// keeps the verdict as an incomplete record, exit 4, and is retried.
func TestTrackRebuildsMissingSketch(t *testing.T) {
	root, days := integrityDays(t, 2)
	led := filepath.Join(t.TempDir(), "loads.jsonl")
	if code, _, errs := integrityTrack(t, root, led); code != ExitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	sk := filepath.Join(filepath.Dir(led), filepath.FromSlash(latestByPartition(t, led)[days[0]].Sketch))
	os.Remove(sk)
	code, out, errs := integrityTrack(t, root, led)
	if code != ExitOK || !strings.HasPrefix(out, days[0]+" ") || !strings.Contains(errs, "missing") {
		t.Errorf("exit %d, stdout %q, stderr %q; want %s profiled again", code, out, errs, days[0])
	}
	if _, err := os.Stat(sk); err != nil {
		t.Errorf("sketch not rebuilt: %v", err)
	}

	os.Remove(sk)
	atomicfile.WrapWriter = func(w io.Writer) io.Writer {
		if f, ok := w.(*os.File); ok && strings.Contains(f.Name(), ".kgs.") {
			return fullDisk{}
		}
		return w
	}
	code, _, errs = integrityTrack(t, root, led)
	atomicfile.WrapWriter = nil
	if code != ExitOutput || !strings.Contains(errs, days[0]) {
		t.Errorf("full disk: exit %d, stderr %q; want 4 naming %s", code, errs, days[0])
	}
	if r := latestByPartition(t, led)[days[0]]; r.Status != ledger.StatusIncomplete || r.K == 0 || !strings.Contains(r.Error, "sketch not saved") {
		t.Errorf("record after the failed sketch: status %q, k %d, error %q", r.Status, r.K, r.Error)
	}
	if code, out, errs := integrityTrack(t, root, led); code != ExitOK || !strings.HasPrefix(out, days[0]+" ") {
		t.Errorf("retry: exit %d, stdout %q: %s", code, out, errs)
	}
}

// TestTrackLedgerSymlink: the lock goes by the ledger's real file, so a run through a symbolic
// link waits for a run on the file; the link stays a link. A ledger that is a data file of the
// lake is refused before anything is read (exit 2 naming both).
func TestTrackLedgerSymlink(t *testing.T) {
	root, days := integrityDays(t, 1)
	dir := t.TempDir()
	led := filepath.Join(dir, "loads.jsonl")
	link := filepath.Join(t.TempDir(), "current.jsonl")
	if err := os.Symlink(led, link); err != nil {
		t.Fatal(err)
	}
	l, err := ledger.Lock(context.Background(), led, 0)
	if err != nil {
		t.Fatal(err)
	}
	code, _, errs := integrityTrack(t, root, link)
	l.Unlock()
	if code != ExitInput || !strings.Contains(errs, led+".lock") {
		t.Errorf("through the link while the file is locked: exit %d, stderr %q; want 3 naming %s.lock", code, errs, led)
	}
	if code, _, errs := integrityTrack(t, root, link); code != ExitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if fi, err := os.Lstat(link); err != nil || fi.Mode()&os.ModeSymlink == 0 {
		t.Errorf("the link was replaced: %v", err)
	}
	if recs := readLedger(t, led); len(recs) != 1 || recs[0].Partition != days[0] {
		t.Errorf("the real ledger holds %d records", len(recs))
	}
	if _, err := os.Stat(filepath.Join(dir, "loads.jsonl.sketches", days[0]+".kgs")); err != nil {
		t.Errorf("sketch not beside the real ledger: %v", err)
	}

	data := filepath.Join(root, days[0], "part-000.parquet")
	before := mustRead(t, data)
	for _, l := range []string{data, filepath.Join(dir, "data-link.jsonl")} {
		os.Symlink(data, filepath.Join(dir, "data-link.jsonl"))
		code, _, errs := integrityTrack(t, root, l)
		if code != ExitUsage || !strings.Contains(errs, "--ledger") || !strings.Contains(errs, data) {
			t.Errorf("--ledger %s: exit %d, stderr %q; want 2 naming the data file", l, code, errs)
		}
	}
	if !bytes.Equal(mustRead(t, data), before) {
		t.Error("a data file was modified")
	}
}

// TestTrackInertText: partition values from the lake reach the text output escaped.
func TestTrackInertText(t *testing.T) {
	root, days := integrityDays(t, 1)
	evil := "day=\x1b[2J\x1b]0;x\x07"
	if err := os.Rename(filepath.Join(root, days[0]), filepath.Join(root, evil)); err != nil {
		t.Fatal(err)
	}
	code, out, errs := integrityTrack(t, root, filepath.Join(t.TempDir(), "l.jsonl"))
	if code != ExitOK {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if strings.ContainsAny(out+errs, "\x1b\x07") || !strings.Contains(out, `day=\x1b[2J`) {
		t.Errorf("raw or missing escape:\n%q\n%q", out, errs)
	}
}
