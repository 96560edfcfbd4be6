package catalog

import (
	"errors"
	"fmt"
	"math"
	"testing"

	"starvet/internal/position"
)

// The builder knows no file format: these tests feed it records by hand,
// as a reader for any format would.

func TestBuilderRecords(t *testing.T) {
	spec := Spec{Name: "finch", File: "finch.tbl", Role: Photometry, Units: map[string]string{"ra": "hour", "parallax": "arcsec"},
		NullMarkers: []string{"--"}, PositionErrMas: 7}
	header := []string{"id", "ra", "dec", "parallax", "spare"}
	b, err := NewBuilder(spec, header, 0, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	rows := [][]string{
		{"f-1", "1", "-30", "0.002", "x"},
		{"f-2", "23.5", "45.25", "--", "y"},
		{"f-3", "2", "91", "0.001", "z"},   // dec out of range
		{"f-1", "3", "10", "0.003", "w"},   // repeated id
		{"f-4", "4", "10", "abc", "v"},     // not a number
		{"f-5", "4", "10"},                 // short row
		{"f-6", "12", "0", " 0.004 ", "u"}, // spaces around a number are read
	}
	for i, rec := range rows {
		if err := b.AddRecord(i+1, rec); err != nil {
			t.Fatalf("row %d: %v", i+1, err)
		}
	}
	tab, rep := b.Finish()
	if fmt.Sprint(tab.IDs) != "[f-1 f-2 f-6]" || fmt.Sprint(tab.Lines) != "[1 2 7]" {
		t.Fatalf("kept %v on lines %v", tab.IDs, tab.Lines)
	}
	// 1 h = 15 deg and 1 arcsec = 1000 mas (definitions of the units,
	// common practice).
	wantRA, wantPlx := []float64{15, 352.5, 180}, []float64{2, math.NaN(), 4}
	for i := range tab.IDs {
		if got := tab.Cols[RA][i]; got != wantRA[i] {
			t.Errorf("%s: ra %v deg, want %v", tab.IDs[i], got, wantRA[i])
		}
		if got := tab.Cols[Parallax][i]; got != wantPlx[i] && !(math.IsNaN(got) && math.IsNaN(wantPlx[i])) {
			t.Errorf("%s: parallax %v mas, want %v", tab.IDs[i], got, wantPlx[i])
		}
		if tab.Cols[RAErr][i] != 7 || tab.Cols[DecErr][i] != 7 {
			t.Errorf("%s: position errors %v %v, want the fallback 7 mas", tab.IDs[i], tab.Cols[RAErr][i], tab.Cols[DecErr][i])
		}
	}
	if tab.Name != "finch" || tab.Role != Photometry || rep.PositionErrFilled != 6 {
		t.Errorf("table %q role %q, filled %d", tab.Name, tab.Role, rep.PositionErrFilled)
	}
	if rep.RowsRead != 7 || rep.RowsKept != 3 || fmt.Sprint(rep.Unused) != "[spare]" {
		t.Errorf("read %d kept %d unused %v", rep.RowsRead, rep.RowsKept, rep.Unused)
	}
	checkQuarantine(t, rep.Quarantined, rows)
}

// checkQuarantine holds the rows TestBuilderRecords sets aside to the
// reasons the builder words.
func checkQuarantine(t *testing.T, got []Quarantine, rows [][]string) {
	want := []struct {
		line, col int
		err       error
		reason    string
	}{
		{3, 3, ErrOutOfRange, "out of range: dec must be in [-90, 90] deg"},
		{4, 1, ErrDuplicateID, "duplicate id: first seen on line 1"},
		{5, 4, ErrNotNumber, "not a number"},
		{6, 4, ErrFieldCount, "wrong number of fields: row has 3 fields, header has 5"},
	}
	if len(got) != len(want) {
		t.Fatalf("quarantined %+v", got)
	}
	for i, w := range want {
		q := got[i]
		if q.Line != w.line || q.Column != w.col || !errors.Is(q.Err, w.err) || q.Reason != w.reason || fmt.Sprint(q.Record) != fmt.Sprint(rows[w.line-1]) {
			t.Errorf("quarantine %+v, want line %d col %d %v %q", q, w.line, w.col, w.err, w.reason)
		}
	}
}

func TestBuilderStrict(t *testing.T) {
	b, err := NewBuilder(Spec{File: "s.tbl"}, []string{"id", "ra", "dec"}, 0, ReadOptions{Strict: true})
	if err != nil {
		t.Fatal(err)
	}
	if err := b.AddRecord(2, []string{"s-1", "10", "20"}); err != nil {
		t.Fatal(err)
	}
	err = b.AddRecord(3, []string{"s-1", "11", "21"})
	var pe *position.Error
	want := `s.tbl:3:1: column "id" value "s-1": duplicate id: first seen on line 2`
	if !errors.As(err, &pe) || !errors.Is(err, ErrDuplicateID) || err.Error() != want || pe.Name != "id" {
		t.Errorf("err %v, want %q", err, want)
	}
	err = b.AddRecord(4, []string{"s-2", "11"})
	if want := "s.tbl:4:3: wrong number of fields: row has 2 fields, header has 3"; err == nil || err.Error() != want {
		t.Errorf("err %v, want %q", err, want)
	}
}

func TestBuilderHeaderErrors(t *testing.T) {
	cases := []struct {
		header []string
		spec   Spec
		line   int
		err    error
		msg    string
	}{
		{[]string{"id", "dec"}, Spec{File: "a.tbl"}, 0, ErrMissingColumn, "a.tbl: missing column: header has no column for required field ra"},
		{[]string{"id", "ra", "dec", "ra"}, Spec{File: "b.txt"}, 1, ErrBadHeader, `b.txt:1:2: bad header: column "ra" appears more than once`},
		{[]string{"id", "ra", "dec"}, Spec{File: "c.tbl", Units: map[string]string{"rv": "knots"}}, 1, ErrBadSpec, "c.tbl: bad catalog spec: units: unknown unit"},
	}
	for _, c := range cases {
		_, err := NewBuilder(c.spec, c.header, c.line, ReadOptions{})
		var pe *position.Error
		if !errors.As(err, &pe) || !errors.Is(err, c.err) || len(err.Error()) < len(c.msg) || err.Error()[:len(c.msg)] != c.msg {
			t.Errorf("err %v, want %v starting %q", err, c.err, c.msg)
		}
	}
}
