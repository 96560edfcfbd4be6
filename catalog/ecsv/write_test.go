package ecsv_test

import (
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"starvet/catalog"
	ecsv "starvet/catalog/ecsv"
)

// The whole file for a small table: YAML header with double-quoted
// strings, then space-delimited rows with nulls as "" and fields holding
// blanks, quotes or a leading '#' quoted.
func TestWriteExact(t *testing.T) {
	tab := &catalog.OutTable{Name: "t", Columns: []catalog.OutColumn{
		{Name: "star id", UCD: "meta.id;meta.main", Description: `the "id"`, Text: []string{"a b", `say "hi"`, "#c", ""}},
		{Name: "v", Unit: "km/s", Float: []float64{0.1, math.NaN(), -2e-300, math.Inf(1)}},
		{Name: "n", Int: []int64{3, catalog.OutNullInt, -1, 0}},
	}}
	path := filepath.Join(t.TempDir(), "t.ecsv")
	if err := ecsv.WriteTable(path, tab); err != nil {
		t.Fatal(err)
	}
	got, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	want := `# %ECSV 1.0
# ---
# datatype:
# - {name: "star id", datatype: string, description: "the \"id\"", meta: {ucd: "meta.id;meta.main"}}
# - {name: "v", unit: "km/s", datatype: float64}
# - {name: "n", datatype: int64}
# meta: {name: "t"}
"star id" v n
"a b" 0.1 3
"say ""hi""" "" ""
"#c" -2e-300 -1
"" +Inf 0
`
	if string(got) != want {
		t.Errorf("got:\n%s\nwant:\n%s", got, want)
	}
}

func TestWriteRefusesLineBreak(t *testing.T) {
	path := filepath.Join(t.TempDir(), "t.ecsv")
	tab := &catalog.OutTable{Columns: []catalog.OutColumn{{Name: "x", Text: []string{"two\nlines"}}}}
	if err := ecsv.WriteTable(path, tab); err == nil || !strings.Contains(err.Error(), path) {
		t.Errorf("error %v, want one naming %s", err, path)
	}
}
