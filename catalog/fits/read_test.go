package fitscat

import (
	"bufio"
	"bytes"
	"compress/gzip"
	"context"
	"crypto/sha256"
	"encoding/hex"
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

const dir = "../../testdata/fits/"

// expected is testdata/fits/expected.json: what astropy reads back from
// the fixtures it wrote (make_fixtures.py states it; null = a null cell).
type expected struct {
	Source       string
	KindsColumns []struct{ Name, Format, Unit, UCD string } `json:"kinds_columns"`
	KindsNumbers map[string][]*json.RawMessage              `json:"kinds_numbers"`
	KindsRows    int                                        `json:"kinds_rows"`
	LongNote     string                                     `json:"kinds_longnote"`
	TSCAL20      float64                                    `json:"kinds_tscal20"`
	Second       struct {
		ID             []string  `json:"id"`
		RA             []float64 `json:"ra"`
		ParallaxArcsec []float64 `json:"parallax_arcsec"`
	}
}

func loadExpected(t *testing.T) *expected {
	t.Helper()
	b, err := os.ReadFile(dir + "expected.json")
	if err != nil {
		t.Fatal(err)
	}
	var e expected
	if err := json.Unmarshal(b, &e); err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(e.Source, "astropy") {
		t.Fatalf("expected.json names no source: %q", e.Source)
	}
	return &e
}

func read(t *testing.T, spec catalog.Spec, opt catalog.ReadOptions) (*catalog.Table, *catalog.Report, error) {
	t.Helper()
	if spec.Name == "" {
		spec.Name = "fixture"
	}
	return Read(context.Background(), spec, opt)
}

// The columns as astropy wrote them: TTYPE, TFORM, TUNIT, TUCD of the
// first BINTABLE.
func TestColumnsAsWritten(t *testing.T) {
	e := loadExpected(t)
	cols, err := Columns(catalog.Spec{File: dir + "kinds.fits"})
	if err != nil {
		t.Fatal(err)
	}
	if len(cols) != len(e.KindsColumns) {
		t.Fatalf("%d columns, astropy wrote %d", len(cols), len(e.KindsColumns))
	}
	for i, c := range cols {
		w := e.KindsColumns[i]
		if c.Name != w.Name || c.Datatype != w.Format || c.Unit != w.Unit || c.UCD != w.UCD {
			t.Errorf("column %d: %+v, astropy wrote %+v", i+1, c, w)
		}
	}
}

// Every scalar numeric column, read as parallax, against astropy's values:
// B, I, J, K, E, D, the unsigned offsets of I, J and K, signed bytes,
// TNULL before scaling, TSCAL with a D exponent, NaN as null.
func TestNumbersAsAstropyReads(t *testing.T) {
	e := loadExpected(t)
	n := 0
	for name, want := range e.KindsNumbers {
		if strings.HasSuffix(name, ":text") || name == "ra" || name == "dec" {
			continue
		}
		n++
		tab, rep, err := read(t, catalog.Spec{File: dir + "kinds.fits", Columns: map[string]string{"id": "tag", "parallax": name}}, catalog.ReadOptions{})
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if rep.RowsKept != e.KindsRows || rep.RowsRead != e.KindsRows || len(rep.Quarantined) != 0 {
			t.Fatalf("%s: read %d kept %d quarantined %v", name, rep.RowsRead, rep.RowsKept, rep.Quarantined)
		}
		got := tab.Cols[catalog.Parallax]
		for r, w := range want {
			if w == nil {
				if !math.IsNaN(got[r]) {
					t.Errorf("%s row %d: %v, astropy: null", name, r+1, got[r])
				}
				continue
			}
			var wf float64
			if err := json.Unmarshal(*w, &wf); err != nil {
				t.Fatal(err)
			}
			if math.Float64bits(got[r]) != math.Float64bits(wf) {
				t.Errorf("%s row %d: %v, astropy: %v", name, r+1, got[r], wf)
			}
		}
		if tab.IDs[0] != "zx-001" || tab.Lines[4] != 5 {
			t.Errorf("%s: ids %v rows %v", name, tab.IDs, tab.Lines)
		}
	}
	if n != 13 {
		t.Errorf("checked %d numeric columns, want the fixture's 13", n)
	}
}

// Every integer column as the id: decimal text, exact (astropy's int),
// with TNULL rows set aside as missing ids at their 1-based row.
func TestIntegerIDs(t *testing.T) {
	e := loadExpected(t)
	n := 0
	for key, want := range e.KindsNumbers {
		name, ok := strings.CutSuffix(key, ":text")
		if !ok {
			continue
		}
		n++
		tab, rep, err := read(t, catalog.Spec{File: dir + "kinds.fits", Columns: map[string]string{"id": name}}, catalog.ReadOptions{})
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		var ids []string
		var nullRows []int
		for r, w := range want {
			if w == nil {
				nullRows = append(nullRows, r+1)
				continue
			}
			var s string
			json.Unmarshal(*w, &s)
			ids = append(ids, s)
		}
		if strings.Join(tab.IDs, ",") != strings.Join(ids, ",") {
			t.Errorf("%s: ids %v, astropy %v", name, tab.IDs, ids)
		}
		if len(rep.Quarantined) != len(nullRows) || rep.RowsRead != rep.RowsKept+len(rep.Quarantined) {
			t.Fatalf("%s: quarantined %v, want rows %v", name, rep.Quarantined, nullRows)
		}
		for i, q := range rep.Quarantined {
			if q.Row != nullRows[i] || q.ColumnName != name || !errors.Is(q.Err, catalog.ErrMissingValue) || len(q.Record) != len(e.KindsColumns) {
				t.Errorf("%s: %+v, want a missing id at row %d", name, q, nullRows[i])
			}
		}
	}
	if n != 9 {
		t.Errorf("checked %d integer columns, want the fixture's 9", n)
	}
}

// Columns of every other type are skipped unmapped (the reads above), and
// mapped to a number are an error naming the file, the HDU and the column.
func TestUnreadableColumnsMapped(t *testing.T) {
	for _, name := range []string{"ok", "bits", "tag", "c", "m", "vec", "heap"} {
		_, _, err := read(t, catalog.Spec{File: dir + "kinds.fits", Columns: map[string]string{"id": "tag", "parallax": name}}, catalog.ReadOptions{})
		var pe *position.Error
		if !errors.As(err, &pe) || !errors.Is(err, catalog.ErrBadHeader) || pe.Name != name ||
			!strings.Contains(err.Error(), `HDU 1 (EXTNAME "KINDS")`) || !strings.Contains(err.Error(), "kinds.fits") {
			t.Errorf("%s mapped: %v", name, err)
		}
	}
	_, _, err := read(t, catalog.Spec{File: dir + "kinds.fits", Columns: map[string]string{"id": "d"}}, catalog.ReadOptions{})
	if !errors.Is(err, catalog.ErrBadHeader) || !strings.Contains(err.Error(), `"d"`) {
		t.Errorf("a float column as id: %v", err)
	}
}

// The long-string convention (FITS Standard 4.0, section 4.2.1.2): the
// value as the script wrote it, doubled quotes and an inner ampersand
// kept; and a real value with a D exponent (section 4.2.4).
func TestHeaderKeywords(t *testing.T) {
	e := loadExpected(t)
	in, err := open(dir + "kinds.fits")
	if err != nil {
		t.Fatal(err)
	}
	defer in.Close()
	h, err := in.find("KINDS")
	if err != nil {
		t.Fatal(err)
	}
	if got := h.hdr.str("LONGNOTE"); got != e.LongNote {
		t.Errorf("LONGNOTE = %q\nwritten    %q", got, e.LongNote)
	}
	if v, _, err := h.hdr.float("TSCAL20"); err != nil || v != e.TSCAL20 {
		t.Errorf("TSCAL20 = %v, %v; astropy %v", v, err, e.TSCAL20)
	}
}

// Cards written here by hand (section 4.2): quotes, comments, D exponents,
// CONTINUE, END.
func TestCards(t *testing.T) {
	cards := []string{
		"SIMPLE  =                    T / conforms",
		"NAME    = 'it''s here  '       / a doubled quote; trailing blanks dropped",
		"LEAD    = '  lead'",
		"REAL    =          -1.25D+02 / D exponent",
		"LONG    = 'one &'",
		"CONTINUE  'two &' / more",
		"CONTINUE  'three'",
		"COMMENT   = not a value",
		"EMPTY   =                      / no value",
		"END",
	}
	var b bytes.Buffer
	for _, c := range cards {
		b.WriteString(c + strings.Repeat(" ", 80-len(c)))
	}
	b.Write(bytes.Repeat([]byte(" "), blockBytes-b.Len()))
	h, err := readHeader(newBufReader(b.Bytes()))
	if err != nil {
		t.Fatal(err)
	}
	if s := h.str("NAME"); s != "it's here" {
		t.Errorf("NAME = %q", s)
	}
	if s := h.str("LEAD"); s != "  lead" {
		t.Errorf("LEAD = %q (leading blanks are significant)", s)
	}
	if v, _, err := h.float("REAL"); v != -125 || err != nil {
		t.Errorf("REAL = %v %v", v, err)
	}
	if s := h.str("LONG"); s != "one two three" {
		t.Errorf("LONG = %q", s)
	}
	if c, ok := h.card("EMPTY"); !ok || !c.null {
		t.Errorf("EMPTY = %+v", c)
	}
	if ok, _ := h.logical("SIMPLE"); !ok {
		t.Error("SIMPLE not T")
	}
	// The same cards without END, padded to a block: an error, not a header.
	noEnd := bytes.Replace(b.Bytes(), []byte("END "), []byte("    "), 1)
	if _, err := readHeader(newBufReader(noEnd)); !errors.Is(err, errNoEND) {
		t.Errorf("no END: %v", err)
	}
}

// Spec.HDU by EXTNAME (any case) and by number; a heap before it is
// skipped; units from TUNIT (arcsec -> mas). An ASCII TABLE is an error
// naming the HDU; an absent HDU lists those present.
func TestHDUSelection(t *testing.T) {
	e := loadExpected(t)
	for _, sel := range []string{"SECOND", "second", "2"} {
		tab, _, err := read(t, catalog.Spec{File: dir + "kinds.fits", HDU: sel}, catalog.ReadOptions{})
		if err != nil {
			t.Fatalf("hdu %q: %v", sel, err)
		}
		if strings.Join(tab.IDs, ",") != strings.Join(e.Second.ID, ",") {
			t.Errorf("hdu %q: ids %v, astropy %v", sel, tab.IDs, e.Second.ID)
		}
		for r, p := range e.Second.ParallaxArcsec {
			if got := tab.Cols[catalog.Parallax][r]; got != p*1000 || tab.Cols[catalog.RA][r] != e.Second.RA[r] {
				t.Errorf("hdu %q row %d: parallax %v mas, astropy %v arcsec", sel, r+1, got, p)
			}
		}
	}
	for _, sel := range []string{"3", "PLAINTEXT"} {
		_, _, err := read(t, catalog.Spec{File: dir + "kinds.fits", HDU: sel}, catalog.ReadOptions{})
		if !errors.Is(err, catalog.ErrFormat) || !strings.Contains(err.Error(), `HDU 3 (EXTNAME "PLAINTEXT")`) || !strings.Contains(err.Error(), "ASCII TABLE") {
			t.Errorf("hdu %q: %v", sel, err)
		}
	}
	for _, sel := range []string{"NOPE", "4", "0"} {
		_, _, err := read(t, catalog.Spec{File: dir + "kinds.fits", HDU: sel}, catalog.ReadOptions{})
		if !errors.Is(err, catalog.ErrBadSpec) {
			t.Errorf("hdu %q: %v", sel, err)
		}
	}
	_, _, err := read(t, catalog.Spec{File: dir + "kinds.fits", HDU: "NOPE"}, catalog.ReadOptions{})
	if err == nil || !strings.Contains(err.Error(), `HDU 2 (EXTNAME "SECOND"): XTENSION BINTABLE`) {
		t.Errorf("absent HDU: %v", err)
	}
}

// The gzipped copy, by name and by magic bytes alone, reads as the plain
// file does; its SHA-256 is that of the compressed bytes.
func TestGzip(t *testing.T) {
	spec := catalog.Spec{File: dir + "kinds.fits", Columns: map[string]string{"id": "tag", "parallax": "uk"}}
	want, _, err := read(t, spec, catalog.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range []string{"kinds.fits.gz", "kinds_gzipped_bytes.fits"} {
		spec.File = dir + f
		tab, rep, err := read(t, spec, catalog.ReadOptions{})
		if err != nil {
			t.Fatalf("%s: %v", f, err)
		}
		raw, _ := os.ReadFile(spec.File)
		sum := sha256.Sum256(raw)
		if rep.SHA256 != hex.EncodeToString(sum[:]) {
			t.Errorf("%s: sha256 %s, the file's bytes %x", f, rep.SHA256, sum)
		}
		if strings.Join(tab.IDs, ",") != strings.Join(want.IDs, ",") || !sameBits(tab.Cols[catalog.Parallax], want.Cols[catalog.Parallax]) {
			t.Errorf("%s: %v %v, plain %v %v", f, tab.IDs, tab.Cols[catalog.Parallax], want.IDs, want.Cols[catalog.Parallax])
		}
	}
}

func sameBits(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Float64bits(a[i]) != math.Float64bits(b[i]) {
			return false
		}
	}
	return true
}

// Truncated data (plain, and gzipped so that it is met while streaming),
// a header without END, and a bad TFORM are errors naming the file and the
// HDU, with no table.
func TestBadFiles(t *testing.T) {
	trunc, err := os.ReadFile(dir + "truncated_data.fits")
	if err != nil {
		t.Fatal(err)
	}
	var zb bytes.Buffer
	zw := gzip.NewWriter(&zb)
	zw.Write(trunc)
	zw.Close()
	gz := filepath.Join(t.TempDir(), "truncated.fits.gz")
	if err := os.WriteFile(gz, zb.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		file     string
		sentinel error
		words    []string
	}{
		{dir + "truncated_data.fits", catalog.ErrUnreadable, []string{"truncated_data.fits", `HDU 1 (EXTNAME "KINDS")`, "data truncated"}},
		{gz, catalog.ErrUnreadable, []string{"truncated.fits.gz", `HDU 1 (EXTNAME "KINDS")`, "data truncated in row 3", "after 2 rows"}},
		{dir + "missing_end.fits", catalog.ErrUnreadable, []string{"missing_end.fits", "HDU 0", "no END card"}},
		{dir + "bad_tform.fits", catalog.ErrBadHeader, []string{"bad_tform.fits", `HDU 1 (EXTNAME "KINDS")`, "column 6 (b)", `bad TFORM "Z"`}},
	}
	for _, c := range cases {
		tab, _, err := read(t, catalog.Spec{File: c.file, Columns: map[string]string{"id": "tag"}}, catalog.ReadOptions{})
		if tab != nil || !errors.Is(err, c.sentinel) {
			t.Errorf("%s: table %v, err %v", c.file, tab != nil, err)
			continue
		}
		for _, w := range c.words {
			if !strings.Contains(err.Error(), w) {
				t.Errorf("%s: %q lacks %q", c.file, err, w)
			}
		}
	}
}

// Rows set aside, at their 1-based rows and columns; kept + quarantined =
// read; strict mode stops at the first with the HDU in the message.
func TestRowsSetAside(t *testing.T) {
	spec := catalog.Spec{File: dir + "bad_rows.fits"}
	tab, rep, err := read(t, spec, catalog.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if strings.Join(tab.IDs, ",") != "qa-1,qa-5" || tab.Lines[1] != 5 || !math.IsNaN(tab.Cols[catalog.Parallax][1]) || tab.Cols[catalog.Parallax][0] != 1 {
		t.Errorf("kept %v rows %v parallax %v", tab.IDs, tab.Lines, tab.Cols[catalog.Parallax])
	}
	want := []struct {
		row  int
		col  string
		err  error
		text string
	}{
		{2, "dec", catalog.ErrOutOfRange, "qa-2,2,95,2"},
		{3, "id", catalog.ErrDuplicateID, "qa-1,3,3,3"},
		{4, "id", catalog.ErrMissingValue, ",4,4,4"},
		{6, "ra", catalog.ErrMissingValue, "qa-6,NaN,6,6"},
	}
	if rep.RowsRead != 6 || rep.RowsRead != rep.RowsKept+len(rep.Quarantined) || len(rep.Quarantined) != len(want) {
		t.Fatalf("read %d kept %d quarantined %+v", rep.RowsRead, rep.RowsKept, rep.Quarantined)
	}
	for i, w := range want {
		q := rep.Quarantined[i]
		if q.Row != w.row || q.Line != 0 || q.ColumnName != w.col || !errors.Is(q.Err, w.err) || strings.Join(q.Record, ",") != w.text {
			t.Errorf("quarantine %d: %+v, want row %d column %s %v record %s", i, q, w.row, w.col, w.err, w.text)
		}
	}
	_, _, err = read(t, spec, catalog.ReadOptions{Strict: true})
	var pe *position.Error
	if !errors.As(err, &pe) || pe.Row != 2 || pe.Name != "dec" || !strings.Contains(err.Error(), `bad_rows.fits: row 2: HDU 1 (EXTNAME "ROWS"), column "dec" value "95"`) {
		t.Errorf("strict: %v", err)
	}
}

func TestNoFile(t *testing.T) {
	_, rep, err := read(t, catalog.Spec{File: dir + "absent.fits"}, catalog.ReadOptions{})
	if !errors.Is(err, catalog.ErrNoFile) || rep != nil {
		t.Errorf("%v", err)
	}
}

func newBufReader(b []byte) *bufio.Reader { return bufio.NewReader(bytes.NewReader(b)) }
