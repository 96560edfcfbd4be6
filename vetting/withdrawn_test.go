package vetting

import (
	"bufio"
	"compress/gzip"
	"os"
	"strings"
	"testing"

	"starvet/verdict"
)

// dropRows rewrites a gzipped CSV without the rows whose first cell is in ids.
func dropRows(t *testing.T, path string, ids map[string]bool) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	zr, err := gzip.NewReader(f)
	if err != nil {
		t.Fatal(err)
	}
	var kept []string
	sc := bufio.NewScanner(zr)
	sc.Buffer(make([]byte, 1<<20), 1<<20)
	for sc.Scan() {
		line := sc.Text()
		if id, _, _ := strings.Cut(line, ","); !ids[id] {
			kept = append(kept, line)
		}
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	f.Close()
	out, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	zw := gzip.NewWriter(out)
	if _, err := zw.Write([]byte(strings.Join(kept, "\n") + "\n")); err != nil {
		t.Fatal(err)
	}
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	if err := out.Close(); err != nil {
		t.Fatal(err)
	}
}

// TestWithdrawn: a star that leaves the primary catalog becomes withdrawn,
// stays withdrawn in later runs, and keeps its history.
func TestWithdrawn(t *testing.T) {
	sc := smallScenario(t, 1500, 9)
	ledger := sc.Dir + "/w.db"
	s1 := runCampaign(t, sc.CampaignPath, ledger, false)
	gone := map[string]bool{sc.Truth[10].StarID: true, sc.Truth[20].StarID: true, sc.Truth[30].StarID: true}
	before := verdictsOf(t, ledger, s1.RunID)
	dropRows(t, sc.AstrometryPath, gone)

	s2 := runCampaign(t, sc.CampaignPath, ledger, false)
	if s2.Counts[verdict.Withdrawn] != len(gone) {
		t.Fatalf("run 2: %d withdrawn, want %d (counts %v)", s2.Counts[verdict.Withdrawn], len(gone), s2.Counts)
	}
	v2 := verdictsOf(t, ledger, s2.RunID)
	if len(v2) != len(before) {
		t.Fatalf("run 2 has %d verdicts, run 1 had %d: every star keeps a verdict", len(v2), len(before))
	}
	for id := range gone {
		if v2[id].Status != string(verdict.Withdrawn) {
			t.Errorf("run 2: %s is %q, want withdrawn", id, v2[id].Status)
		}
		if n := s2.Transitions[before[id].Status+" -> "+string(verdict.Withdrawn)]; n == 0 {
			t.Errorf("run 2: no transition %s -> withdrawn counted", before[id].Status)
		}
	}
	s3 := runCampaign(t, sc.CampaignPath, ledger, false)
	if s3.Computed != 0 || s3.Counts[verdict.Withdrawn] != len(gone) {
		t.Fatalf("run 3: computed %d, withdrawn %d; want 0 and %d", s3.Computed, s3.Counts[verdict.Withdrawn], len(gone))
	}
	if after := verdictsOf(t, ledger, s1.RunID); len(after) != len(before) {
		t.Fatalf("run 1 changed: %d verdicts, had %d", len(after), len(before))
	}
}
