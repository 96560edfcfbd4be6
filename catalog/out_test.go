package catalog

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"testing"
)

func TestOutFormat(t *testing.T) {
	for file, want := range map[string]string{
		"a.csv": FormatCSV, "A.CSV.GZ": FormatCSV, "a.ecsv": FormatECSV, "a.ecsv.gz": FormatECSV,
		"a.fits": FormatFITS, "a.fit": FormatFITS, "a.fits.gz": FormatFITS, "a.fit.gz": FormatFITS,
		"a.vot": FormatVOTable, "a.votable": FormatVOTable, "a.xml": FormatVOTable,
	} {
		if got, err := OutFormat(file); got != want || err != nil {
			t.Errorf("OutFormat(%q) = %q, %v; want %q", file, got, err, want)
		}
	}
	for _, file := range []string{"a.txt", "a.parquet", "a.vot.gz", "a.gz", "csv"} {
		if _, err := OutFormat(file); !errors.Is(err, ErrFormat) {
			t.Errorf("OutFormat(%q): error %v, want ErrFormat", file, err)
		}
	}
}

func TestFieldColumn(t *testing.T) {
	for f, want := range map[Field][2]string{
		ID: {"", "meta.id"}, RAErr: {"mas", "stat.error;pos.eq.ra"}, PMDec: {"mas/yr", "pos.pm;pos.eq.dec"},
		Parallax: {"mas", "pos.parallax.trig"}, RV: {"km/s", "spect.dopplerVeloc"}, CorrRADec: {"", ""},
	} {
		c := FieldColumn(f)
		if c.Name != Fields[f].Name || c.Unit != want[0] || c.UCD != want[1] || c.Description != Fields[f].Doc {
			t.Errorf("FieldColumn(%s) = %+v, want unit %q UCD %q", Fields[f].Name, c, want[0], want[1])
		}
		if got, ok := FieldByUCD(c.UCD); c.UCD != "" && (!ok || got != f) {
			t.Errorf("%s: its UCD %q maps back to %s", Fields[f].Name, c.UCD, Fields[got].Name)
		}
	}
}

func TestOutCheck(t *testing.T) {
	good := OutTable{Columns: []OutColumn{{Name: "a", Float: []float64{}}, {Name: "b", Text: []string{}}}}
	if err := good.Check(); err != nil || good.Len() != 0 {
		t.Errorf("empty table: %v, %d rows", err, good.Len())
	}
	for what, bad := range map[string]OutTable{
		"no name":  {Columns: []OutColumn{{Float: []float64{1}}}},
		"twice":    {Columns: []OutColumn{{Name: "a", Float: []float64{1}}, {Name: "a", Int: []int64{1}}}},
		"no slice": {Columns: []OutColumn{{Name: "a"}}},
		"two":      {Columns: []OutColumn{{Name: "a", Float: []float64{1}, Text: []string{"x"}}}},
		"lengths":  {Columns: []OutColumn{{Name: "a", Float: []float64{1}}, {Name: "b", Int: []int64{1, 2}}}},
	} {
		if err := bad.Check(); err == nil {
			t.Errorf("%s: no error", what)
		}
	}
}

// CSV drops units; nulls are empty fields and numbers keep every digit.
func TestWriteOutCSV(t *testing.T) {
	path := filepath.Join(t.TempDir(), "t.csv")
	tab := &OutTable{Columns: []OutColumn{
		{Name: "id", Unit: "", Text: []string{"a,b", ""}},
		{Name: "v", Unit: "km/s", Float: []float64{math.Nextafter(0.3, 1), math.NaN()}},
		{Name: "n", Int: []int64{OutNullInt, -3}},
	}}
	if err := WriteOutCSV(path, tab); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(path)
	if want := "id,v,n\n\"a,b\",0.30000000000000004,\n,,-3\n"; err != nil || string(b) != want {
		t.Errorf("got %q (%v), want %q", b, err, want)
	}
}
