package votable

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"math"
	"os"
	"strings"
	"testing"

	"starvet/catalog"
	"starvet/internal/position"
)

const dir = "../../testdata/votable/"

func read(t *testing.T, file, table string, opt catalog.ReadOptions) (*catalog.Table, *catalog.Report, Info, error) {
	t.Helper()
	return ReadTable(context.Background(), catalog.Spec{Name: "lark", File: dir + file, Table: table}, opt)
}

// The invented catalog "lark" in TABLEDATA, BINARY, BINARY2 and gzipped
// BINARY2, all written by astropy.io.votable 5.2.1 (make_fixtures.py);
// every expected value below is one the script wrote (its ROWS), float
// columns as the float32 astropy stores.
func TestLarkInEverySerialisation(t *testing.T) {
	for _, file := range []string{"lark_tabledata.vot", "lark_binary.vot", "lark_binary2.vot", "lark_binary2.vot.gz"} {
		t.Run(file, func(t *testing.T) {
			tab, rep, info, err := read(t, file, "", catalog.ReadOptions{})
			if err != nil {
				t.Fatal(err)
			}
			if rep.RowsRead != 6 || rep.RowsKept != 5 || len(rep.Quarantined) != 1 || rep.RowsRead != rep.RowsKept+len(rep.Quarantined) {
				t.Fatalf("read %d kept %d quarantined %d", rep.RowsRead, rep.RowsKept, len(rep.Quarantined))
			}
			// Row 5 (lark-005) has a null ra: set aside, naming row and column.
			q := rep.Quarantined[0]
			if q.Row != 5 || q.Line != 0 || q.Column != 2 || q.ColumnName != "ra_icrs" || !errors.Is(q.Err, catalog.ErrMissingValue) {
				t.Errorf("quarantine %+v", q)
			}
			if len(q.Record) != 12 || q.Record[0] != "lark-005" || q.Record[11] != "no ra" {
				t.Errorf("quarantined record %q", q.Record)
			}
			wantIDs := []string{"lark-001", "lark-002", "lark-003", "lark-004", "lark-006"}
			if strings.Join(tab.IDs, " ") != strings.Join(wantIDs, " ") {
				t.Errorf("ids %q", tab.IDs)
			}
			if tab.Lines[4] != 6 {
				t.Errorf("rows %v, want the last kept from row 6", tab.Lines)
			}
			nan := math.NaN()
			f32 := func(x float64) float64 { return float64(float32(x)) }
			want := map[catalog.Field][]float64{
				catalog.RA:          {10.5, 200.125, 359.9, 0, 123.456789012345},
				catalog.Dec:         {-20.25, 45, -89.5, 0, 12.345678901234},
				catalog.Parallax:    {1.5, 0.3333333333333333, nan, 2, 0.1},
				catalog.ParallaxErr: {0.125, 0.0625, nan, 0.5, f32(0.01)},
				catalog.PMRA:        {3.25, -1, 0.1, 0, 5.5},
				catalog.PMRAErr:     {0.5, 0.75, f32(0.2), f32(0.1), f32(0.05)},
				catalog.PMDec:       {-7.75, 2.5, 0.3, 0, -5.5},
				catalog.PMDecErr:    {0.25, 0.5, f32(0.4), f32(0.1), f32(0.05)},
				catalog.RV:          {101.5, -55.25, nan, 0, 300},
				catalog.FitVisits:   {12, nan, 8, 30, 1},
			}
			for f, w := range want {
				got := tab.Cols[f]
				for i := range w {
					if i >= len(got) || !(got[i] == w[i] || math.IsNaN(got[i]) && math.IsNaN(w[i])) {
						t.Errorf("%s = %v, want %v", catalog.Fields[f].Name, got, w)
						break
					}
				}
			}
			if rep.MappedBy["ra"] != catalog.ByUCD || rep.Mapped["pm_ra_err"] != "e_pm_a" || rep.MappedBy["fit_visits"] != catalog.ByName {
				t.Errorf("mapped %v by %v", rep.Mapped, rep.MappedBy)
			}
			if len(rep.Unused) != 1 || rep.Unused[0] != "note" {
				t.Errorf("unused %q", rep.Unused)
			}
			// The COOSYS the ra FIELD refers to: epoch="J2015.5".
			if info.Epoch != "J2015.5" || info.EpochJyr != 2015.5 || tab.EpochJyr != 2015.5 || info.Table != "lark" {
				t.Errorf("info %+v, table epoch %v", info, tab.EpochJyr)
			}
			raw, err := os.ReadFile(dir + file)
			if err != nil {
				t.Fatal(err)
			}
			if sum := sha256.Sum256(raw); rep.SHA256 != hex.EncodeToString(sum[:]) {
				t.Errorf("sha256 %s, want that of the file's bytes", rep.SHA256)
			}
		})
	}
}

// Strict mode stops at the first row set aside, naming file, table, row
// and column.
func TestStrictNamesTableRowColumn(t *testing.T) {
	_, _, _, err := read(t, "lark_binary2.vot", "", catalog.ReadOptions{Strict: true})
	var pe *position.Error
	if !errors.As(err, &pe) || pe.Row != 5 || pe.Name != "ra_icrs" || !errors.Is(err, catalog.ErrMissingValue) {
		t.Fatalf("got %v", err)
	}
	for _, s := range []string{dir + "lark_binary2.vot", "row 5", `table "lark"`, `column "ra_icrs"`} {
		if !strings.Contains(err.Error(), s) {
			t.Errorf("%q lacks %q", err, s)
		}
	}
}

// two_tables.vot (astropy): "ember" (ID ember_t, one int column), then
// "cinder" (ID cinder_t): long id 9007199254740993 and 42, ra 1.25/3.75,
// dec 2.5/-4.5, rv as float in m/s 1500 and -250 (astropy writes the
// unit "m.s-1").
func TestSelectTable(t *testing.T) {
	for _, sel := range []string{"cinder", "2", "cinder_t"} {
		tab, rep, info, err := read(t, "two_tables.vot", sel, catalog.ReadOptions{})
		if err != nil {
			t.Fatalf("%q: %v", sel, err)
		}
		if info.Table != "cinder" || rep.RowsKept != 2 || tab.IDs[0] != "9007199254740993" || tab.IDs[1] != "42" ||
			tab.Cols[catalog.RA][1] != 3.75 || tab.Cols[catalog.Dec][1] != -4.5 {
			t.Errorf("%q: %+v %v %v", sel, info, tab.IDs, tab.Cols[catalog.RA])
		}
		// 1500 m/s is 1.5 km/s (the builder's factor 1e-3; common practice).
		if rv := tab.Cols[catalog.RV]; math.Abs(rv[0]-1.5) > 1e-12 || math.Abs(rv[1]+0.25) > 1e-12 {
			t.Errorf("%q: rv %v km/s", sel, rv)
		}
	}
	_, _, _, err := read(t, "two_tables.vot", "", catalog.ReadOptions{})
	if !errors.Is(err, catalog.ErrMissingColumn) || !strings.Contains(err.Error(), `table "ember"`) {
		t.Errorf("first table has no positions: %v", err)
	}
	_, _, _, err = read(t, "two_tables.vot", "ash", catalog.ReadOptions{})
	if !errors.Is(err, ErrNoTable) || !errors.Is(err, catalog.ErrBadSpec) || !strings.Contains(err.Error(), "ember, cinder") {
		t.Errorf("absent table: %v", err)
	}
	cols, err := Columns(catalog.Spec{File: dir + "two_tables.vot", Table: "2"})
	if err != nil || len(cols) != 4 || cols[3] != (catalog.ColumnMeta{Name: "rv", Datatype: "float", Unit: "m.s-1", UCD: "spect.dopplerVeloc"}) {
		t.Errorf("columns %+v %v", cols, err)
	}
}

// overflow.vot: the lark table with INFO QUERY_STATUS="OVERFLOW" after it.
func TestOverflowIsLoud(t *testing.T) {
	tab, rep, info, err := read(t, "overflow.vot", "", catalog.ReadOptions{})
	if err != nil || len(rep.Warnings) != 1 || !strings.Contains(rep.Warnings[0], ErrOverflow.Error()) || !strings.Contains(rep.Warnings[0], "overflow.vot") {
		t.Fatalf("got %v, warnings %q", err, rep.Warnings)
	}
	if tab == nil || rep.RowsKept != 5 || info.QueryStatus != "OVERFLOW" {
		t.Errorf("table %v, report %+v, info %+v", tab, rep, info)
	}
}

func TestBadFiles(t *testing.T) {
	cases := []struct {
		file     string
		sentinel error
		has      []string
		row      int64
	}{
		{"bad_malformed.vot", ErrMalformed, []string{"not well-formed XML", `table "lark"`}, 1},
		{"bad_cut_document.vot", ErrMalformed, []string{"the document ends before its elements close", "cut short"}, 0},
		{"bad_short_stream.vot", ErrTruncated, []string{"BINARY2 stream ends inside row 6", `table "lark"`, "row 6"}, 6},
	}
	for _, c := range cases {
		tab, _, _, err := read(t, c.file, "", catalog.ReadOptions{})
		var pe *position.Error
		if tab != nil || !errors.Is(err, c.sentinel) || !errors.Is(err, catalog.ErrUnreadable) || !errors.As(err, &pe) || pe.File != dir+c.file {
			t.Errorf("%s: table %v, err %v", c.file, tab != nil, err)
			continue
		}
		if pe.Row != c.row {
			t.Errorf("%s: row %d, want %d", c.file, pe.Row, c.row)
		}
		for _, s := range c.has {
			if !strings.Contains(err.Error(), s) {
				t.Errorf("%s: %q lacks %q", c.file, err, s)
			}
		}
	}
}

// An empty STREAM element ("<STREAM .../>", allowed by XML) holds no
// rows; the reader must not take the text after it for base64. The
// document is hand-written (common practice: XML empty-element syntax).
func TestEmptyStream(t *testing.T) {
	doc := `<VOTABLE><RESOURCE><TABLE name="t"><FIELD name="id" datatype="char" arraysize="*"/>` +
		`<FIELD name="ra" datatype="double"/><FIELD name="dec" datatype="double"/>` +
		`<DATA><BINARY2><STREAM encoding="base64"/></BINARY2></DATA></TABLE>` +
		`<INFO name="QUERY_STATUS" value="OK">fine</INFO></RESOURCE></VOTABLE>`
	p := t.TempDir() + "/empty.vot"
	if err := os.WriteFile(p, []byte(doc), 0o644); err != nil {
		t.Fatal(err)
	}
	tab, rep, info, err := ReadTable(context.Background(), catalog.Spec{File: p}, catalog.ReadOptions{})
	if err != nil || tab.Len() != 0 || rep.RowsRead != 0 || info.QueryStatus != "OK" || info.QueryMessage != "fine" {
		t.Fatalf("rows %v, info %+v, err %v", rep, info, err)
	}
}
