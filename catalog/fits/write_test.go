package fitscat_test

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"starvet/catalog"
	fitscat "starvet/catalog/fits"
)

// writeSample has canonical columns (so that our reader maps them) of
// every kind, with nulls, a quote and a blank inside text, a unit the
// FITS spelling changes and one the reader converts.
func writeSample() *catalog.OutTable {
	nan := math.NaN()
	id := catalog.FieldColumn(catalog.ID)
	id.Text = []string{"s-1", "it's 2", "s3"}
	ra := catalog.FieldColumn(catalog.RA)
	ra.Float = []float64{10.125, 359.999999999999, math.Nextafter(0.3, 1)}
	pm := catalog.FieldColumn(catalog.PMRA)
	pm.Float = []float64{-3.25e-7, nan, 1e300}
	rv := catalog.FieldColumn(catalog.RV)
	rv.Float = []float64{512.5, -0.0, nan}
	visits := catalog.FieldColumn(catalog.FitVisits)
	visits.Int = []int64{12, catalog.OutNullInt, 1 << 52}
	note := catalog.OutColumn{Name: "note", Description: "free text", Text: []string{"", "two words", "x"}}
	dec := catalog.FieldColumn(catalog.Dec)
	dec.Float = []float64{-89.5, 0, 45}
	return &catalog.OutTable{Name: "sample", Columns: []catalog.OutColumn{id, ra, pm, rv, visits, note, dec}}
}

func writeCardsOf(t *testing.T, b []byte, hdu int) map[string]string {
	t.Helper()
	cards := map[string]string{}
	for off, n := 0, 0; off+80 <= len(b); off += 80 {
		c := string(b[off : off+80])
		if n == hdu {
			cards[strings.TrimSpace(c[:8])] = c
		}
		if strings.TrimSpace(c) == "END" {
			n++
			off = (off+80+2879)/2880*2880 - 80
			if n > hdu {
				break
			}
		}
	}
	return cards
}

// The exact cards of the table header: fixed-format values, FITS unit
// spellings, TNULL only on the integer column, text widths from the
// longest value.
func TestWriteTableCards(t *testing.T) {
	path := filepath.Join(t.TempDir(), "out.fits")
	if err := fitscat.WriteTable(path, writeSample()); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if len(b)%2880 != 0 {
		t.Fatalf("file is %d bytes, not whole 2880-byte blocks", len(b))
	}
	prim := writeCardsOf(t, b, 0)
	if got := prim["SIMPLE"]; !strings.HasPrefix(got, "SIMPLE  =                    T") {
		t.Errorf("SIMPLE card %q", got)
	}
	if got := prim["NAXIS"]; !strings.HasPrefix(got, "NAXIS   =                    0") {
		t.Errorf("NAXIS card %q", got)
	}
	cards := writeCardsOf(t, b, 1)
	want := map[string]string{
		"XTENSION": "'BINTABLE'", "NAXIS1": "55", "NAXIS2": "3", "TFIELDS": "7", "PCOUNT": "0", "GCOUNT": "1",
		"TTYPE1": "'id      '", "TFORM1": "'6A      '", "TUCD1": "'meta.id '",
		"TTYPE2": "'ra      '", "TFORM2": "'D       '", "TUNIT2": "'deg     '", "TUCD2": "'pos.eq.ra'",
		"TFORM3": "'D       '", "TUNIT3": "'mas yr-1'", "TUCD3": "'pos.pm;pos.eq.ra'",
		"TUNIT4": "'km s-1  '", "TUCD4": "'spect.dopplerVeloc'",
		"TTYPE5": "'fit_visits'", "TFORM5": "'K       '", "TNULL5": "-9223372036854775808",
		"TTYPE6": "'note    '", "TFORM6": "'9A      '", "EXTNAME": "'sample  '",
	}
	for key, v := range want {
		c, ok := cards[key]
		if !ok {
			t.Errorf("no %s card", key)
			continue
		}
		if got := strings.TrimSpace(strings.SplitN(c[10:], " / ", 2)[0]); got != v {
			t.Errorf("%s = %s, want %s (card %q)", key, got, v, c)
		}
	}
	for _, key := range []string{"TUNIT1", "TUNIT5", "TNULL1", "TNULL2", "TUNIT6", "TUCD6"} {
		if c, ok := cards[key]; ok {
			t.Errorf("unexpected card %q", c)
		}
	}
	if !strings.Contains(cards["TTYPE2"], "/ right ascension, ICRS") {
		t.Errorf("TTYPE2 card lacks the description as its comment: %q", cards["TTYPE2"])
	}
	if got := cards["NAXIS1"][10:30]; got != "                  55" {
		t.Errorf("NAXIS1 value %q is not right-justified to column 30", got)
	}
}

// Written by WriteTable, read back by our reader: the columns as written
// (names, TFORMs, units, UCDs) and every value, nulls as NaN, units
// converted from their FITS spellings, plain and gzipped.
func TestWriteTableRoundTrip(t *testing.T) {
	for _, name := range []string{"out.fits", "out.fits.gz"} {
		path := filepath.Join(t.TempDir(), name)
		tab := writeSample()
		if err := fitscat.WriteTable(path, tab); err != nil {
			t.Fatal(err)
		}
		cols, err := fitscat.Columns(catalog.Spec{File: path})
		if err != nil {
			t.Fatal(err)
		}
		want := []catalog.ColumnMeta{{Name: "id", Datatype: "6A", Unit: "", UCD: "meta.id"}, {Name: "ra", Datatype: "D", Unit: "deg", UCD: "pos.eq.ra"},
			{Name: "pm_ra", Datatype: "D", Unit: "mas yr-1", UCD: "pos.pm;pos.eq.ra"}, {Name: "rv", Datatype: "D", Unit: "km s-1", UCD: "spect.dopplerVeloc"},
			{Name: "fit_visits", Datatype: "K", Unit: "", UCD: ""}, {Name: "note", Datatype: "9A", Unit: "", UCD: ""},
			{Name: "dec", Datatype: "D", Unit: "deg", UCD: "pos.eq.dec"}}
		if len(cols) != len(want) {
			t.Fatalf("%s: columns %+v", name, cols)
		}
		for i := range want {
			if cols[i] != want[i] {
				t.Errorf("%s: column %d = %+v, want %+v", name, i+1, cols[i], want[i])
			}
		}
		got, rep, err := fitscat.Read(context.Background(), catalog.Spec{Name: "x", File: path}, catalog.ReadOptions{Strict: true})
		if err != nil {
			t.Fatal(err)
		}
		if rep.RowsKept != 3 || strings.Join(got.IDs, "|") != "s-1|it's 2|s3" {
			t.Fatalf("%s: kept %d, ids %q", name, rep.RowsKept, got.IDs)
		}
		for _, c := range tab.Columns {
			f, ok := catalog.FieldByName(c.Name)
			if !ok || f == catalog.ID {
				continue
			}
			in := c.Float
			if c.Int != nil {
				in = make([]float64, len(c.Int))
				for i, v := range c.Int {
					in[i] = float64(v)
					if v == catalog.OutNullInt {
						in[i] = math.NaN()
					}
				}
			}
			for i, v := range got.Col(f) {
				if math.Float64bits(v) != math.Float64bits(in[i]) && !(math.IsNaN(v) && math.IsNaN(in[i])) {
					t.Errorf("%s: %s row %d read %v, wrote %v", name, c.Name, i+1, v, in[i])
				}
			}
		}
	}
}

// What FITS cannot hold is an error naming the file, and no file is left.
func TestWriteTableRefuses(t *testing.T) {
	dir := t.TempDir()
	for what, tab := range map[string]*catalog.OutTable{
		"non-ASCII text": {Columns: []catalog.OutColumn{{Name: "id", Text: []string{"a", "é"}}}},
		"two slices":     {Columns: []catalog.OutColumn{{Name: "x", Float: []float64{1}, Int: []int64{1}}}},
		"unequal rows":   {Columns: []catalog.OutColumn{{Name: "x", Float: []float64{1}}, {Name: "y", Int: []int64{}}}},
		"long name":      {Columns: []catalog.OutColumn{{Name: strings.Repeat("n", 69), Float: []float64{}}}},
	} {
		path := filepath.Join(dir, "bad.fits")
		err := fitscat.WriteTable(path, tab)
		if err == nil || !strings.Contains(err.Error(), path) {
			t.Errorf("%s: error %v, want one naming %s", what, err, path)
		}
		if _, serr := os.Stat(path); serr == nil {
			t.Errorf("%s: %s left behind", what, path)
		}
	}
}
