package csvcat

import (
	"context"
	"errors"
	"reflect"
	"strings"
	"testing"

	"starvet/catalog"
	"starvet/internal/position"
)

// delimBody is one small catalog in comma-separated form; the other
// delimiters' files are made from it by replacing the commas.
const delimBody = "id,ra,dec,parallax,rv\n" +
	"d1,10.5,-20.25,1.5,12\n" +
	"d2,200,45,,-3.5\n" +
	"d3,300.125,0,0.25,NaN\n" +
	"d4,x,1,2,3\n"

// TestDelimiters: the same catalog separated by semicolons, tabs or runs
// of whitespace reads as the comma file does, by the fast splitter and by
// the reference path (encoding/csv, or for whitespace the quote-aware
// splitter).
func TestDelimiters(t *testing.T) {
	dir := t.TempDir()
	ref, refRep, err := Read(context.Background(), catalog.Spec{File: writeTemp(t, dir, "c.csv", []byte(delimBody))}, catalog.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if ref.Len() != 3 || len(refRep.Quarantined) != 1 {
		t.Fatalf("comma: kept %d quarantined %d", ref.Len(), len(refRep.Quarantined))
	}
	cases := []struct {
		name, delim, body string
	}{
		{"semicolon", ";", strings.ReplaceAll(delimBody, ",", ";")},
		{"tab", "\t", strings.ReplaceAll(delimBody, ",", "\t")},
		// Whitespace: runs of spaces and tabs, padded lines, a blank line,
		// and the empty rv written as "".
		{"whitespace", " ", "  id  ra\tdec parallax rv  \n" +
			"d1 10.5   -20.25 1.5 12\n" +
			"\t d2 200 45 \"\" -3.5\n\n" +
			"d3 300.125 0 0.25 NaN \n" +
			"d4 x 1 2 3\n"},
	}
	for _, c := range cases {
		p := writeTemp(t, dir, c.name+".txt", []byte(c.body))
		spec := catalog.Spec{File: p, Delimiter: c.delim}
		tab, rep, err := Read(context.Background(), spec, catalog.ReadOptions{})
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		if !reflect.DeepEqual(tab.IDs, ref.IDs) || !reflect.DeepEqual(tab.Cols, ref.Cols) && !sameCols(tab, ref) {
			t.Fatalf("%s: ids %v cols differ from the comma file", c.name, tab.IDs)
		}
		if len(rep.Quarantined) != 1 || rep.Quarantined[0].ColumnName != "ra" || rep.Quarantined[0].Value != "x" {
			t.Fatalf("%s: quarantined %+v", c.name, rep.Quarantined)
		}
		if d := sameRead(spec, catalog.ReadOptions{}); d != "" {
			t.Fatalf("%s: %s", c.name, d)
		}
	}
	// The whitespace file's rows keep their lines (a blank line at 4).
	tab, _, _ := Read(context.Background(), catalog.Spec{File: dir + "/whitespace.txt", Delimiter: " "}, catalog.ReadOptions{})
	if !reflect.DeepEqual(tab.Lines, []int{2, 3, 5}) {
		t.Fatalf("whitespace lines %v, want [2 3 5]", tab.Lines)
	}
}

func sameCols(a, b *catalog.Table) bool {
	for f := range a.Cols {
		x, y := a.Cols[f], b.Cols[f]
		if len(x) != len(y) {
			return false
		}
		for i := range x {
			if x[i] != y[i] && !(x[i] != x[i] && y[i] != y[i]) {
				return false
			}
		}
	}
	return true
}

// TestWhitespaceQuotes: quoted fields with spaces, doubled quotes and a
// line break; a bare quote and an unclosed quote are malformed rows.
func TestWhitespaceQuotes(t *testing.T) {
	body := "id ra dec note\n" +
		"\"a b\" 1 2 \"say \"\"hi\"\"\"\n" + // 2
		"c 3 4 \"two\nlines\"\n" + // 3-4
		"e 5 6 x\"y\n" + // 5
		"f 7 8 \"open\" z\"\n" + // 6
		"g 9 10 \"never closed\n" // 7
	p := writeTemp(t, t.TempDir(), "q.txt", []byte(body))
	tab, rep, err := Read(context.Background(), catalog.Spec{File: p, Delimiter: " "}, catalog.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(tab.IDs, []string{"a b", "c"}) || !reflect.DeepEqual(tab.Lines, []int{2, 3}) {
		t.Fatalf("ids %q lines %v", tab.IDs, tab.Lines)
	}
	var lines []int
	for _, q := range rep.Quarantined {
		if !errors.Is(q.Err, catalog.ErrMalformed) {
			t.Fatalf("quarantined %+v, want malformed", q)
		}
		lines = append(lines, q.Line)
	}
	if !reflect.DeepEqual(lines, []int{5, 6, 7}) || rep.RowsRead != 5 {
		t.Fatalf("malformed at %v (read %d), want [5 6 7]", lines, rep.RowsRead)
	}
	if q := rep.Quarantined[0]; q.Reason != `bare " in non-quoted-field` {
		t.Fatalf("reason %q", q.Reason)
	}
}

// TestOneColumnHint: a header of one name holding another delimiter names
// the delimiter key.
func TestOneColumnHint(t *testing.T) {
	dir := t.TempDir()
	for _, c := range []struct{ delim, body, want string }{
		{"", "id;ra;dec\na;1;2\n", `header has one column "id;ra;dec"; if the file is separated by ";" set delimiter = ";" in its [[catalog]]`},
		{"", "id\tra\tdec\n", `header has one column "id\tra\tdec"; if the file is separated by "\t" set delimiter = "\t" in its [[catalog]]`},
		{";", "id,ra,dec\n", `if the file is separated by "," set delimiter = "," in its [[catalog]]`},
		{"", "id ra dec\n", `if the file is separated by " " set delimiter = " " in its [[catalog]]`},
	} {
		p := writeTemp(t, dir, "h.csv", []byte(c.body))
		_, _, err := Read(context.Background(), catalog.Spec{File: p, Delimiter: c.delim}, catalog.ReadOptions{})
		var pe *position.Error
		if !errors.As(err, &pe) || !errors.Is(err, catalog.ErrBadHeader) || pe.Line != 1 || pe.Col != 1 ||
			!strings.HasPrefix(err.Error(), p+":1:1: bad header: ") || !strings.Contains(err.Error(), c.want) {
			t.Fatalf("delimiter %q: %v", c.delim, err)
		}
	}
	// One column without another delimiter: the usual missing-column error.
	p := writeTemp(t, dir, "h.csv", []byte("id\na\n"))
	if _, _, err := Read(context.Background(), catalog.Spec{File: p}, catalog.ReadOptions{}); !errors.Is(err, catalog.ErrMissingColumn) {
		t.Fatalf("one plain column: %v", err)
	}
}

func TestBadDelimiter(t *testing.T) {
	p := writeTemp(t, t.TempDir(), "x.csv", []byte(delimBody))
	for _, d := range []string{"|", ",,", "\n", "  "} {
		_, _, err := Read(context.Background(), catalog.Spec{File: p, Delimiter: d}, catalog.ReadOptions{})
		if !errors.Is(err, catalog.ErrBadSpec) || !strings.Contains(err.Error(), "delimiter") {
			t.Fatalf("delimiter %q: %v", d, err)
		}
		if _, err := Columns(catalog.Spec{File: p, Delimiter: d}); !errors.Is(err, catalog.ErrBadSpec) {
			t.Fatalf("Columns, delimiter %q: %v", d, err)
		}
	}
	cols, err := Columns(catalog.Spec{File: writeTemp(t, t.TempDir(), "t.tsv", []byte("id\tra\tdec\n")), Delimiter: "\t"})
	if err != nil || len(cols) != 3 || cols[2].Name != "dec" {
		t.Fatalf("tab Columns %v %v", cols, err)
	}
}

// A file named .tsv is tab-separated without a delimiter key (the
// ending's meaning: common practice); an explicit delimiter still wins.
func TestTSVEnding(t *testing.T) {
	dir := t.TempDir()
	p := writeTemp(t, dir, "t.tsv", []byte("id\tra\tdec\nx1\t10.5\t-3\n"))
	tab, rep, err := Read(context.Background(), catalog.Spec{File: p}, catalog.ReadOptions{})
	if err != nil || rep.RowsKept != 1 || tab.Cols[catalog.RA][0] != 10.5 {
		t.Fatalf("tsv: %v, %+v", err, rep)
	}
	if _, _, err := Read(context.Background(), catalog.Spec{File: p, Delimiter: ","}, catalog.ReadOptions{}); !errors.Is(err, catalog.ErrBadHeader) {
		t.Errorf("tsv read as comma-separated: %v, want the one-column header error", err)
	}
}
