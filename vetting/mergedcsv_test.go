package vetting

import (
	"os"
	"path/filepath"
	"testing"

	"starvet/catalog"
	"starvet/crossmatch"
)

// The merged CSV is machine output: separations and probabilities keep
// every digit.
func TestWriteMergedFullPrecision(t *testing.T) {
	p := &catalog.Table{Name: "p", IDs: []string{"k1", "k2"}}
	s := &catalog.Table{Name: "s", IDs: []string{"x"}}
	c := &Catalogs{Primary: p, Secondaries: []*catalog.Table{s}}
	m := &Matched{DupCount: []int32{0, 1}, Results: []*crossmatch.Result{{Matches: []crossmatch.Counterpart{
		{Secondary: 0, CounterpartID: "x", SepArcsec: 0.630642123456789, Prob: 3.403605097820214e-07, Candidates: 1},
		{Secondary: -1, Candidates: 2}}}}}
	path := filepath.Join(t.TempDir(), "merged.csv")
	if err := WriteMerged(path, c, m, nil); err != nil {
		t.Fatal(err)
	}
	got, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	want := "id,s_id,s_sep_arcsec,s_match_prob,s_candidates,s_ambiguous,dup_count\n" +
		"k1,x,0.630642123456789,3.403605097820214e-07,1,false,0\n" +
		"k2,,,,2,,1\n"
	if string(got) != want {
		t.Errorf("merged CSV:\n%s\nwant:\n%s", got, want)
	}
}
