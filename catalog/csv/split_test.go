package csvcat

import (
	"bytes"
	"compress/gzip"
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"strconv"
	"strings"
	"testing"

	"starvet/catalog"
	"starvet/internal/position"
)

// The reference for the line splitter is encoding/csv reading the whole
// file (read with forceCSV), the path every file took before the splitter:
// for every input both must give the same table, report and error.

// sameRead compares a read by the splitter with the encoding/csv read of
// the same spec and returns the first difference, or "".
func sameRead(spec catalog.Spec, opt catalog.ReadOptions) string {
	t1, r1, e1 := read(context.Background(), spec, opt, false, nil)
	ref := opt
	ref.Workers = 1
	t2, r2, e2 := read(context.Background(), spec, ref, true, nil)
	if (e1 == nil) != (e2 == nil) {
		return fmt.Sprintf("error %v, reference %v", e1, e2)
	}
	if e1 != nil {
		if e1.Error() != e2.Error() || reflect.TypeOf(e1) != reflect.TypeOf(e2) {
			return fmt.Sprintf("error %q (%T), reference %q (%T)", e1, e1, e2, e2)
		}
		for _, s := range []error{catalog.ErrNotNumber, catalog.ErrOutOfRange, catalog.ErrDuplicateID, catalog.ErrMissingValue, catalog.ErrFieldCount,
			catalog.ErrMalformed, catalog.ErrNoFile, catalog.ErrMissingColumn, catalog.ErrBadHeader, catalog.ErrUnreadable, catalog.ErrBadSpec} {
			if errors.Is(e1, s) != errors.Is(e2, s) {
				return fmt.Sprintf("error %q: errors.Is(%v) differs", e1, s)
			}
		}
		// Every field of the two errors must agree; the wrapped errors are
		// compared by their text, their sentinels by errors.Is above.
		var w1, w2 *position.Error
		if errors.As(e1, &w1) && errors.As(e2, &w2) {
			a, b := *w1, *w2
			if fmt.Sprint(a.Err) != fmt.Sprint(b.Err) {
				return fmt.Sprintf("error wraps %v, reference %v", a.Err, b.Err)
			}
			a.Err, b.Err = nil, nil
			if a != b {
				return fmt.Sprintf("error %+v, reference %+v", a, b)
			}
		}
	}
	if !reflect.DeepEqual(r1, r2) {
		return fmt.Sprintf("report\n %+v\nreference\n %+v", r1, r2)
	}
	if (t1 == nil) != (t2 == nil) {
		return fmt.Sprintf("table %v, reference %v", t1 != nil, t2 != nil)
	}
	if t1 == nil {
		return ""
	}
	if !reflect.DeepEqual(t1.IDs, t2.IDs) || !reflect.DeepEqual(t1.Lines, t2.Lines) {
		return fmt.Sprintf("ids %q lines %v, reference %q %v", t1.IDs, t1.Lines, t2.IDs, t2.Lines)
	}
	if t1.Name != t2.Name || t1.Role != t2.Role || t1.Release != t2.Release || t1.EpochJyr != t2.EpochJyr {
		return "table metadata differs"
	}
	for f := range t1.Cols {
		c1, c2 := t1.Cols[f], t2.Cols[f]
		if (c1 == nil) != (c2 == nil) || len(c1) != len(c2) {
			return fmt.Sprintf("column %s: %d values (nil %v), reference %d (nil %v)", catalog.Fields[f].Name, len(c1), c1 == nil, len(c2), c2 == nil)
		}
		for i := range c1 {
			if math.Float64bits(c1[i]) != math.Float64bits(c2[i]) {
				return fmt.Sprintf("column %s row %d: %v, reference %v", catalog.Fields[f].Name, i, c1[i], c2[i])
			}
		}
	}
	return ""
}

func writeTemp(t testing.TB, dir, name string, body []byte) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, body, 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func gzipped(t testing.TB, body []byte) []byte {
	t.Helper()
	var b bytes.Buffer
	zw := gzip.NewWriter(&b)
	if _, err := zw.Write(body); err != nil {
		t.Fatal(err)
	}
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// manyRows returns n quote-free data rows id,ra,dec,parallax starting at
// line first.
func manyRows(n, first int) string {
	var b strings.Builder
	for i := range n {
		fmt.Fprintf(&b, "m-%d,%d.25,%d.5,%d.125\n", first+i, i%360, i%90, i%7)
	}
	return b.String()
}

var splitCases = []struct {
	name string
	body string
}{
	{"plain", "id,ra,dec,parallax\na,1,2,3\nb,4.5,-6.25,0.001\n"},
	{"crlf", "id,ra,dec\r\na,1,2\r\nb,3,4\r\n"},
	{"lone cr in a field", "id,ra,dec\na,1\r,2\nb,3,4\r\r\nc,5\r\r,6\n"},
	{"cr ends the input", "id,ra,dec\na,1,2\r"},
	{"two cr end the input", "id,ra,dec\na,1,2\r\r"},
	{"no final newline", "id,ra,dec\na,1,2"},
	{"empty lines", "\n\r\n\nid,ra,dec\n\na,1,2\n\r\n\nb,3,4\n\n"},
	{"cr only lines", "id,ra,dec\n\r\r\na,1,2\n\r\n"},
	{"bom", "\ufeffid,ra,dec\na,1,2\n"},
	{"bom and quoted header", "\ufeff\"id\",ra,dec\na,1,2\n"},
	{"quoted header", "\"id\",ra,dec\na,1,2\n"},
	{"quoted header after empty lines", "\n\n\"id\",ra,dec\na,1,2\n"},
	{"header with bare quote", "id,r\"a,dec\na,1,2\n"},
	{"header only", "id,ra,dec\n"},
	{"header only, no newline", "id,ra,dec"},
	{"empty", ""},
	{"newlines only", "\n\r\n\n"},
	{"no ra", "id,dec\na,1\n"},
	{"duplicate header", "id,ra,dec,ra\na,1,2,3\n"},
	{"quoted field mid-file", "id,ra,dec\na,1,2\n\"b\",3,4\nc,5,6\nc,7,8\n"},
	{"quoted number", "id,ra,dec\na,\"1.5\",2\nb,3,4\n"},
	{"embedded newline", "id,ra,dec,parallax\n\"ml\n1\",1,2,x\nml-2,3,4,5\nml-3,3,4,y\n"},
	{"embedded crlf", "id,ra,dec\n\"a\r\nb\",1,2\nc,3,4\r\n"},
	{"bare quote", "id,ra,dec\nq-1,1,2\nq-\"2,3,4\nq-3,5,6\n"},
	{"unterminated quote", "id,ra,dec\na,1,2\n\"b,3,4\nc,5,6\n"},
	{"quote then garbage", "id,ra,dec\n\"a\"x,1,2\nb,3,4\n"},
	{"ragged rows", "id,ra,dec\na,1\nb,1,2,3\nc,1,2\n,\n"},
	{"numbers", "id,ra,dec,parallax\na,1,2,abc\nb,1,2, 3.5\nc,1,2,1e-3\nd,1,2,inf\ne,1,2,NaN\nf,1,2,0x1p-2\ng,1,2,1_0\n" +
		"h,1,2,+.5\ni,1,2,-0\nj,1,2,.\nk,1,2,12345678901234567890.5\nl,1,2,9007199254740993\nm,1,2,0.1234567890123456789\n" +
		"n,1,2,-.\no,1,2,1.2.3\np,1,2,--1\nq,1,2,5.\nr,1,2,+\ns,1,2,1e400\nt,1,2,\u00a01\nu,1,2,1 \nv,1,2,000000000000000000001\n"},
	{"nulls", "id,ra,dec,parallax,rv\na,1,2,,\nb,1,2,NaN,null\nc,1,2,NA,-999\nNA,1,2,3,4\n-999,1,2,3,4\nd,,2,3,4\ne,1,null,3,4\n,1,2,3,4\n"},
	{"ranges", "id,ra,dec,ra_err,corr_ra_dec\na,360,0,1,0\nb,-0.0001,0,1,0\nc,1,90.0001,1,0\nd,1,-90,-1,0\ne,1,0,1,1.0001\nf,359.999,90,0,-1\n"},
	{"duplicate ids", "id,ra,dec\na,1,2\na,3,4\nb,1,2\na,5,6\nc,x,1\nc,1,1\nc,2,2\n"},
	{"invalid utf-8 and nul", "id,ra,dec\n\xff\xfe,1,2\na\x00b,3,4\n\xff\xfe,5,6\n"},
	{"unused columns", "id,extra,ra,note,dec\na,q\"q,1,,2\nb,,3,x,4\n"},
	{"quote after many rows", "id,ra,dec,parallax\n" + manyRows(5000, 2) + "\"q\",1,2,3\n" + manyRows(5000, 5003) +
		"m-7,1,2,3\nbad,1,2,z\n\"open,1,2\n" + manyRows(10, 10004)},
	{"many rows with problems", "id,ra,dec,parallax\n" + manyRows(4095, 2) + "m-2,1,1,1\n" + manyRows(4097, 4098) + "x,1,95,1\n\n\ny,1,1\n"},
}

func TestSplitterMatchesCSV(t *testing.T) {
	dir := t.TempDir()
	longField := strings.Repeat("w", 3*splitBufBytes+17) // longer than the splitter's buffer
	cases := append(splitCases[:len(splitCases):len(splitCases)], struct{ name, body string }{
		"long line", "id,ra,dec,extra\na,1,2," + longField + "\nb,3,4,x\n" + manyRows(3000, 4)})
	specs := []struct {
		name string
		spec catalog.Spec
	}{
		{"default", catalog.Spec{}},
		{"markers", catalog.Spec{NullMarkers: []string{"NA", "-999"}}},
		{"units", catalog.Spec{Units: map[string]string{"ra": "hour", "parallax": "arcsec", "rv": "m/s"}, PositionErrMas: 50}},
		{"modulus", catalog.Spec{Columns: map[string]string{"distance": "parallax"}, Units: map[string]string{"distance": "mag"}}},
	}
	for i, c := range cases {
		for _, gz := range []bool{false, true} {
			body := []byte(c.body)
			file := fmt.Sprintf("c%d.csv", i)
			if gz {
				body, file = gzipped(t, body), file+".gz"
			}
			p := writeTemp(t, dir, file, body)
			for _, s := range specs {
				for _, strict := range []bool{false, true} {
					t.Run(fmt.Sprintf("%s/gz=%v/%s/strict=%v", c.name, gz, s.name, strict), func(t *testing.T) {
						spec := s.spec
						spec.Name, spec.File = "splitcase", p
						if d := sameRead(spec, catalog.ReadOptions{Strict: strict, Workers: i % 4}); d != "" {
							t.Error(d)
						}
					})
				}
			}
		}
	}
}

// TestSplitterReadErrors cuts gzip files short, so the decompressor fails
// in the middle of a line, of a quoted field and of the header.
func TestSplitterReadErrors(t *testing.T) {
	dir := t.TempDir()
	bodies := []struct {
		name string
		body string
	}{
		{"plain", "id,ra,dec,parallax\n" + manyRows(20000, 2)},
		{"quoted", "id,ra,dec,parallax\n" + manyRows(9000, 2) + "\"q\nq\",1,2,3\n" + manyRows(9000, 9004)},
		{"quoted header", "\"id\",ra,dec,parallax\n" + manyRows(20000, 2)},
	}
	for _, b := range bodies {
		full := gzipped(t, []byte(b.body))
		for _, frac := range []float64{0.02, 0.3, 0.5, 0.77, 0.999} {
			t.Run(fmt.Sprintf("%s/%.3f", b.name, frac), func(t *testing.T) {
				p := writeTemp(t, dir, fmt.Sprintf("cut-%s-%.3f.csv.gz", b.name, frac), full[:int(frac*float64(len(full)))])
				for _, strict := range []bool{false, true} {
					if d := sameRead(catalog.Spec{File: p}, catalog.ReadOptions{Strict: strict}); d != "" {
						t.Errorf("strict=%v: %s", strict, d)
					}
				}
				if _, _, err := Read(context.Background(), catalog.Spec{File: p}, catalog.ReadOptions{}); !errors.Is(err, catalog.ErrUnreadable) {
					t.Errorf("err = %v, want ErrUnreadable", err)
				}
			})
		}
	}
}

// FuzzReadSameAsCSV holds the splitter to encoding/csv on any input, after
// a fixed header or with the fuzzer's own.
func FuzzReadSameAsCSV(f *testing.F) {
	for _, c := range splitCases {
		if len(c.body) < 4096 {
			f.Add([]byte(c.body), false)
		}
	}
	f.Add([]byte("a,1,2,3,4\nb,\"1\",2,,\n"), true)
	f.Add([]byte("a,1,2,3,4\r\n\"b\nc\",1,2,3,4\n"), true)
	f.Add([]byte("a;1;2;3;4\nb;\"1\";2;;\n"), true)
	f.Add([]byte("a 1  2 3 4\n b \"1\" 2 \"\" \"x\ny\"\n"), true)
	f.Fuzz(func(t *testing.T, body []byte, header bool) {
		// Each delimiter reads the same bytes: the comma's and the
		// semicolon's reference is encoding/csv, the whitespace's the
		// quote-aware splitter on every line.
		dir := t.TempDir()
		for _, d := range []string{",", ";", " "} {
			b := body
			if header {
				b = append([]byte(strings.ReplaceAll("id,ra,dec,parallax,rv\n", ",", d)), body...)
			}
			p := writeTemp(t, dir, "fuzz.csv", b)
			for _, strict := range []bool{false, true} {
				if diff := sameRead(catalog.Spec{File: p, Delimiter: d, NullMarkers: []string{"NA"}}, catalog.ReadOptions{Strict: strict}); diff != "" {
					t.Errorf("delimiter %q strict=%v: %s", d, strict, diff)
				}
			}
		}
	})
}

func TestParseDecimal(t *testing.T) {
	fixed := []string{"0", "-0", "+0", "0.0", "-0.0", "1", "-1", "+1", ".5", "5.", "-.5", "+.5", "1.5", "123.456789012",
		"0.1", "0.2", "0.3", "9007199254740991", "9007199254740992", "9007199254740993", "900719925474099.3",
		"1234567890123456789", "12345678901234567890", "0.000000000000000001", "0.0000000000000000001",
		"4.35", "2.675", "1.0000000000000002", "359.999999999", "-89.999999999", "",
		".", "-", "+", "-.", "1.2.3", "--1", "1e5", "1E5", "inf", "NaN", "0x10", "1_0", " 1", "1 ", "١"}
	check := func(t *testing.T, s string) {
		got, ok := parseDecimal([]byte(s))
		want, err := strconv.ParseFloat(s, 64) // the standard library's correctly rounded parse
		if ok && (err != nil || math.Float64bits(got) != math.Float64bits(want)) {
			t.Errorf("parseDecimal(%q) = %v (%#x), strconv %v (%#x) err %v", s, got, math.Float64bits(got), want, math.Float64bits(want), err)
		}
	}
	for _, s := range fixed {
		t.Run(strconv.Quote(s), func(t *testing.T) { check(t, s) })
	}
	// Every accepted shape must be accepted (else the fast path is idle).
	for _, s := range []string{"0", "-0", "1.5", "+.5", "5.", "123.456789012", "9007199254740991", "0.00000000000000001"} {
		if _, ok := parseDecimal([]byte(s)); !ok {
			t.Errorf("parseDecimal(%q) declined", s)
		}
	}
	t.Run("random", func(t *testing.T) {
		rng := rand.New(rand.NewPCG(5, 6))
		const alphabet = "0123456789.-+e"
		accepted := 0
		for range 200000 {
			n := 1 + rng.IntN(21)
			b := make([]byte, n)
			for i := range b {
				if rng.IntN(8) == 0 {
					b[i] = alphabet[10+rng.IntN(4)]
				} else {
					b[i] = alphabet[rng.IntN(10)]
				}
			}
			if _, ok := parseDecimal(b); ok {
				accepted++
			}
			check(t, string(b))
		}
		if accepted < 20000 {
			t.Errorf("only %d of 200000 accepted", accepted)
		}
	})
}

func FuzzParseDecimal(f *testing.F) {
	for _, s := range []string{"1.5", "-0", "123.456789012", "9007199254740993", ".5"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		got, ok := parseDecimal([]byte(s))
		want, err := strconv.ParseFloat(s, 64)
		if ok && (err != nil || math.Float64bits(got) != math.Float64bits(want)) {
			t.Errorf("parseDecimal(%q) = %v, strconv %v err %v", s, got, want, err)
		}
	})
}

// TestParsePlain checks that plain rows take the one-pass path (the table
// tests pass either way, as every row it declines goes to
// catalog.Layout.ConvertRecord) and
// that it declines what it must.
func TestParsePlain(t *testing.T) {
	header := []string{"id", "note", "ra", "dec", "parallax"}
	plans := []catalog.Column{{Index: 2, Field: catalog.RA, Factor: 1}, {Index: 3, Field: catalog.Dec, Factor: 1}, {Index: 4, Field: catalog.Parallax, Factor: 1000}}
	cases := []struct {
		line    string
		markers []string
		ok      bool
		id      string
		vals    [3]float64 // ra, dec, parallax
	}{
		{"a,,1.5,-2,0.25", nil, true, "a", [3]float64{1.5, -2, 250}},
		{"a,x,1.5,-2,", nil, true, "a", [3]float64{1.5, -2, math.NaN()}},
		{"a,x,1.5,-2,1e-3", nil, true, "a", [3]float64{1.5, -2, 1}},
		{"a,x,1.5,-2,-999", []string{"-999"}, true, "a", [3]float64{1.5, -2, math.NaN()}},
		{"a,x,1.5,-2,NA", []string{"NA"}, true, "a", [3]float64{1.5, -2, math.NaN()}},
		{"a,x,1.5,-2", nil, false, "", [3]float64{}},
		{"a,x,1.5,-2,1,", nil, false, "", [3]float64{}},
		{",x,1.5,-2,1", nil, false, "", [3]float64{}},
		{"a,x,,-2,1", nil, false, "", [3]float64{}},
		{"a,x,1.5,-2,abc", nil, false, "", [3]float64{}},
		{"a,x,1.5,-2,inf", nil, false, "", [3]float64{}},
		{"a,x,1.5,-2, 1", nil, false, "", [3]float64{}},
		{"a,x,1.5,95,1", nil, false, "", [3]float64{}},
		{"a,x,1.5,-2,-1", nil, true, "a", [3]float64{1.5, -2, -1000}},
	}
	for _, c := range cases {
		t.Run(fmt.Sprintf("%q", c.line), func(t *testing.T) {
			spec := catalog.Spec{File: "plain.csv", Units: map[string]string{"parallax": "arcsec"}, NullMarkers: append([]string{}, c.markers...)}
			bld, err := catalog.NewBuilder(spec, header, 1, catalog.ReadOptions{})
			if err != nil {
				t.Fatal(err)
			}
			if l := bld.Layout(); !reflect.DeepEqual(l.Columns, plans) || l.IDIndex != 0 {
				t.Fatalf("layout %+v id %d, want %+v id 0", l.Columns, l.IDIndex, plans)
			}
			var row [catalog.NumFields]float64
			id, ok := newConverter(bld.Layout(), ',').parsePlain([]byte(c.line), &row)
			if ok != c.ok || string(id) != c.id {
				t.Fatalf("id %q ok %v, want %q %v", id, ok, c.id, c.ok)
			}
			if !ok {
				return
			}
			for i, f := range []catalog.Field{catalog.RA, catalog.Dec, catalog.Parallax} {
				if math.Float64bits(row[f]) != math.Float64bits(c.vals[i]) && !(math.IsNaN(row[f]) && math.IsNaN(c.vals[i])) {
					t.Errorf("%s = %v, want %v", catalog.Fields[f].Name, row[f], c.vals[i])
				}
			}
		})
	}
}

// BenchmarkParseDecimal compares the exact fast path with strconv on
// numbers shaped like the benchmark files' cells, read from inside a line
// as parsePlain does.
func BenchmarkParseDecimal(b *testing.B) {
	rng := rand.New(rand.NewPCG(9, 10))
	var line []byte
	var starts []int
	for range 4096 {
		starts = append(starts, len(line))
		line = strconv.AppendFloat(line, rng.NormFloat64()*100, 'f', 2+rng.IntN(8), 64)
		line = append(line, ',')
	}
	b.Run("scanDecimal", func(b *testing.B) {
		var sum float64
		for i := 0; b.Loop(); i++ {
			v, _, _ := scanDecimal(line, starts[i&4095])
			sum += v
		}
		_ = sum
	})
	b.Run("strconv", func(b *testing.B) {
		var sum float64
		for i := 0; b.Loop(); i++ {
			k := i & 4095
			end := len(line)
			if k+1 < len(starts) {
				end = starts[k+1]
			}
			v, _ := strconv.ParseFloat(string(line[starts[k]:end-1]), 64)
			sum += v
		}
		_ = sum
	})
}
