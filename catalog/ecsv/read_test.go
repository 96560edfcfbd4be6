package ecsv

import (
	"context"
	"encoding/json"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"starvet/catalog"
	"starvet/internal/position"
)

const dataDir = "../../testdata/ecsv"

// expected is testdata/ecsv/expected.json: what astropy (the independent
// writer, see make_fixtures.py) reads back from each fixture, in starvet's
// canonical units, null for a masked value.
type expected struct {
	Rows              int                   `json:"rows"`
	IDs               []string              `json:"ids"`
	Fields            map[string][]*float64 `json:"fields"`
	QuarantinedLine   int                   `json:"quarantined_line"`
	QuarantinedColumn int                   `json:"quarantined_column"`
	HeaderLine        int                   `json:"header_line"`
	Column            int                   `json:"column"`
	CutLine           int                   `json:"cut_line"`
	Units             map[string]*string    `json:"units"`
}

func loadExpected(t *testing.T) map[string]expected {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(dataDir, "expected.json"))
	if err != nil {
		t.Fatal(err)
	}
	var raw map[string]json.RawMessage
	if err := json.Unmarshal(b, &raw); err != nil {
		t.Fatal(err)
	}
	out := make(map[string]expected)
	for k, v := range raw {
		if strings.HasPrefix(k, "_") {
			continue
		}
		var e expected
		if err := json.Unmarshal(v, &e); err != nil {
			t.Fatalf("%s: %v", k, err)
		}
		out[k] = e
	}
	return out
}

func read(t *testing.T, name string, spec catalog.Spec, opt catalog.ReadOptions) (*catalog.Table, *catalog.Report, error) {
	t.Helper()
	spec.File = filepath.Join(dataDir, name)
	spec.Name = "t"
	tab, rep, err := Read(context.Background(), spec, opt)
	if rep != nil && err == nil && rep.RowsRead != rep.RowsKept+len(rep.Quarantined) {
		t.Fatalf("%s: read %d != kept %d + quarantined %d", name, rep.RowsRead, rep.RowsKept, len(rep.Quarantined))
	}
	return tab, rep, err
}

// TestAgainstAstropy reads every good fixture and holds ids and values to
// what astropy states in expected.json.
func TestAgainstAstropy(t *testing.T) {
	want := loadExpected(t)
	for _, name := range []string{"space.ecsv", "comma.ecsv", "space.ecsv.gz", "null.ecsv", "ucd.ecsv"} {
		t.Run(name, func(t *testing.T) {
			e := want[name]
			tab, rep, err := read(t, name, catalog.Spec{}, catalog.ReadOptions{Strict: true})
			if err != nil {
				t.Fatal(err)
			}
			if rep.RowsRead != e.Rows || tab.Len() != e.Rows || len(e.IDs) != e.Rows {
				t.Fatalf("read %d kept %d, astropy %d rows", rep.RowsRead, tab.Len(), e.Rows)
			}
			for i, id := range e.IDs {
				if tab.IDs[i] != id {
					t.Errorf("row %d id %q, astropy %q", i, tab.IDs[i], id)
				}
			}
			if len(e.Fields) == 0 {
				t.Fatal("expected.json states no values")
			}
			for fname, vals := range e.Fields {
				f, ok := catalog.FieldByName(fname)
				if !ok {
					t.Fatalf("unknown field %s", fname)
				}
				col := tab.Col(f)
				if len(col) != len(vals) {
					t.Fatalf("%s: %d values, astropy %d", fname, len(col), len(vals))
				}
				for i, v := range vals {
					got := col[i]
					switch {
					case v == nil && !math.IsNaN(got):
						t.Errorf("%s row %d = %v, astropy: masked", fname, i, got)
					case v != nil && math.Abs(got-*v) > 1e-12*math.Max(1, math.Abs(*v)):
						t.Errorf("%s row %d = %v, astropy %v", fname, i, got, *v)
					}
				}
			}
		})
	}
}

func TestMappingByUCDAndUnits(t *testing.T) {
	_, rep, err := read(t, "ucd.ecsv", catalog.Spec{}, catalog.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	for field, col := range map[string]string{"id": "src", "ra": "alpha", "dec": "delta", "parallax": "plx", "rv": "vrad", "pm_ra": "pmx"} {
		if rep.Mapped[field] != col || rep.MappedBy[field] != catalog.ByUCD {
			t.Errorf("%s from %q by %q, want %q by ucd", field, rep.Mapped[field], rep.MappedBy[field], col)
		}
	}
	cols, err := Columns(catalog.Spec{File: filepath.Join(dataDir, "ucd.ecsv")})
	if err != nil {
		t.Fatal(err)
	}
	// Values as the fixture's header writes them (astropy's unit strings,
	// the slash closed up).
	want := []catalog.ColumnMeta{
		{Name: "src", Datatype: "string", UCD: "meta.id;meta.main"},
		{Name: "alpha", Datatype: "float64", Unit: "deg", UCD: "pos.eq.ra;meta.main"},
		{Name: "delta", Datatype: "float64", Unit: "deg", UCD: "pos.eq.dec;meta.main"},
		{Name: "plx", Datatype: "float64", Unit: "mas", UCD: "pos.parallax.trig"},
		{Name: "vrad", Datatype: "float64", Unit: "m/s", UCD: "spect.dopplerVeloc.opt"},
		{Name: "pmx", Datatype: "float64", Unit: "mas/yr", UCD: "pos.pm;pos.eq.ra"},
	}
	if len(cols) != len(want) {
		t.Fatalf("%d columns, want %d", len(cols), len(want))
	}
	for i := range want {
		if cols[i] != want[i] {
			t.Errorf("column %d %+v, want %+v", i, cols[i], want[i])
		}
	}
}

func fileErr(t *testing.T, err error, sentinel error, line, col int, text string) {
	t.Helper()
	var pe *position.Error
	if !errors.As(err, &pe) {
		t.Fatalf("error %v (%T), want *position.Error", err, err)
	}
	if !errors.Is(err, sentinel) || pe.Line != line || pe.Col != col || !strings.Contains(err.Error(), text) {
		t.Fatalf("error %q (line %d col %d), want %v at %d:%d containing %q", err, pe.Line, pe.Col, sentinel, line, col, text)
	}
	if !strings.HasPrefix(err.Error(), pe.File+":") || !strings.HasSuffix(pe.File, ".ecsv") {
		t.Fatalf("error %q does not start with the file", err)
	}
}

func TestBadFiles(t *testing.T) {
	want := loadExpected(t)
	_, _, err := read(t, "noversion.ecsv", catalog.Spec{}, catalog.ReadOptions{})
	fileErr(t, err, catalog.ErrBadHeader, 1, 0, `the first line must be "# %ECSV 1.0", found "# ---"`)

	m := want["mismatch.ecsv"]
	_, _, err = read(t, "mismatch.ecsv", catalog.Spec{}, catalog.ReadOptions{})
	fileErr(t, err, catalog.ErrBadHeader, m.HeaderLine, m.Column, `the column-name line has "dec" where the header lists "ra"`)

	c := want["truncated.ecsv"]
	_, _, err = read(t, "truncated.ecsv", catalog.Spec{}, catalog.ReadOptions{})
	var pe *position.Error
	if !errors.As(err, &pe) || !errors.Is(err, catalog.ErrBadHeader) || !strings.Contains(err.Error(), "YAML header") {
		t.Fatalf("truncated: %v", err)
	}
	// The YAML parser notices the unclosed mapping at or after the cut.
	if pe.Line < c.CutLine || pe.Line > c.CutLine+1 {
		t.Fatalf("truncated: line %d, cut at %d: %v", pe.Line, c.CutLine, err)
	}

	_, _, err = read(t, "missing.ecsv", catalog.Spec{}, catalog.ReadOptions{})
	if !errors.Is(err, catalog.ErrNoFile) {
		t.Fatalf("missing file: %v", err)
	}
}

func TestBadRow(t *testing.T) {
	b := loadExpected(t)["badrow.ecsv"]
	tab, rep, err := read(t, "badrow.ecsv", catalog.Spec{}, catalog.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if rep.RowsRead != b.Rows || tab.Len() != b.Rows-1 || len(rep.Quarantined) != 1 {
		t.Fatalf("read %d kept %d quarantined %d", rep.RowsRead, tab.Len(), len(rep.Quarantined))
	}
	q := rep.Quarantined[0]
	if q.Line != b.QuarantinedLine || q.Column != b.QuarantinedColumn || q.ColumnName != "parallax" || q.Value != "abc" || !errors.Is(q.Err, catalog.ErrNotNumber) {
		t.Fatalf("quarantined %+v, want line %d column %d", q, b.QuarantinedLine, b.QuarantinedColumn)
	}
	_, _, err = read(t, "badrow.ecsv", catalog.Spec{}, catalog.ReadOptions{Strict: true})
	fileErr(t, err, catalog.ErrNotNumber, b.QuarantinedLine, b.QuarantinedColumn, `column "parallax" value "abc"`)
}

// TestNullWithCampaignMarkers: null stays missing when a campaign names
// its own markers.
func TestNullWithCampaignMarkers(t *testing.T) {
	tab, rep, err := read(t, "null.ecsv", catalog.Spec{NullMarkers: []string{"-99"}}, catalog.ReadOptions{})
	if err != nil || len(rep.Quarantined) != 0 {
		t.Fatalf("%v %+v", err, rep.Quarantined)
	}
	if rv := tab.Col(catalog.RV); !math.IsNaN(rv[2]) || !math.IsNaN(rv[5]) || rv[0] != -120.5 {
		t.Fatalf("rv %v", rv)
	}
}

func writeTemp(t testing.TB, body string) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), "x.ecsv")
	if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestHeaderErrors(t *testing.T) {
	const head = "# %ECSV 1.0\n# ---\n# datatype:\n# - {name: id, datatype: string}\n# - {name: ra, unit: deg, datatype: float64}\n"
	for _, c := range []struct {
		body      string
		line, col int
		text      string
	}{
		{head + "# - {name: dec, datatype: float32x}\nid ra dec\n", 6, 0, `column "dec" has datatype "float32x"`},
		{head + "# - {name: ra, datatype: float64}\nid ra ra\n", 6, 0, `column "ra" is listed twice`},
		{head + "# - {datatype: float64}\nid ra\n", 6, 0, "datatype entry 3 has no name"},
		{head + "# delimiter: ';'\nid;ra\n", 6, 0, `delimiter ";"`},
		{head + "#bad\nid ra\n", 6, 2, `starts with "# "`},
		{head + "id ra dec\n", 6, 3, `extra "dec"`},
		{head + "id\n", 6, 2, `missing "ra"`},
		{head, 6, 0, "no column-name line after line 5"},
		{"# %ECSV 2.0\n", 1, 0, "the first line must be"},
		{"", 1, 0, "found no header line"},
		{"# %ECSV 1.0\n# ---\n# meta: {a: 1}\nid ra\n", 3, 0, "lists no columns"},
	} {
		spec := catalog.Spec{File: writeTemp(t, c.body)}
		_, _, err := Read(context.Background(), spec, catalog.ReadOptions{})
		sentinel := catalog.ErrBadHeader
		fileErr(t, err, sentinel, c.line, c.col, c.text)
	}
}

// TestDataLines: blank and whitespace-padded rows, a quoted cell spanning
// two lines, and a malformed quote in a space-delimited body keep their
// file lines.
func TestDataLines(t *testing.T) {
	body := "# %ECSV 1.0\n# ---\n# datatype:\n# - {name: id, datatype: string}\n# - {name: ra, unit: deg, datatype: float64}\n" +
		"# - {name: dec, unit: deg, datatype: float64}\n# - {name: note, datatype: string}\n" +
		"id ra dec note\n" + // line 8
		"  a1   1.5\t2.5  x  \n" + // 9
		"\n" + // 10
		"a2 3 4 \"two\nlines\"\n" + // 11-12
		"a3 5 6 bad\"quote\n" + // 13
		"a4 7 null y\n" + // 14
		"a5 8 9 z\n" // 15
	tab, rep, err := Read(context.Background(), catalog.Spec{File: writeTemp(t, body)}, catalog.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if rep.RowsRead != 5 || tab.Len() != 3 || len(rep.Quarantined) != 2 {
		t.Fatalf("read %d kept %d quarantined %+v", rep.RowsRead, tab.Len(), rep.Quarantined)
	}
	if got := tab.Lines; len(got) != 3 || got[0] != 9 || got[1] != 11 || got[2] != 15 {
		t.Fatalf("lines %v, want [9 11 15]", got)
	}
	if q := rep.Quarantined[0]; q.Line != 13 || !errors.Is(q.Err, catalog.ErrMalformed) {
		t.Fatalf("quarantined %+v, want a malformed row at line 13", q)
	}
	if q := rep.Quarantined[1]; q.Line != 14 || q.ColumnName != "dec" || !errors.Is(q.Err, catalog.ErrMissingValue) {
		t.Fatalf("quarantined %+v, want dec missing at line 14", q)
	}
	if ra := tab.Col(catalog.RA); ra[0] != 1.5 || ra[1] != 3 || ra[2] != 8 {
		t.Fatalf("ra %v", ra)
	}
}
