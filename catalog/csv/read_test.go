package csvcat

import (
	"compress/gzip"
	"context"
	"crypto/sha256"
	"encoding/csv"
	"encoding/hex"
	"errors"
	"fmt"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"
	"time"

	"starvet/catalog"
	"starvet/internal/position"
)

const dataDir = "../../testdata/ingest"

func path(name string) string { return filepath.Join(dataDir, name) }

func mustRead(t *testing.T, spec catalog.Spec) (*catalog.Table, *catalog.Report) {
	t.Helper()
	tab, rep, err := Read(context.Background(), spec, catalog.ReadOptions{})
	if err != nil {
		t.Fatalf("Read(%s): %v", spec.File, err)
	}
	if rep.RowsRead != rep.RowsKept+len(rep.Quarantined) {
		t.Errorf("rows read %d != kept %d + quarantined %d", rep.RowsRead, rep.RowsKept, len(rep.Quarantined))
	}
	if tab.Len() != rep.RowsKept || len(tab.Lines) != tab.Len() {
		t.Errorf("table has %d ids, %d lines; report says %d kept", tab.Len(), len(tab.Lines), rep.RowsKept)
	}
	for f, c := range tab.Cols {
		if c != nil && len(c) != tab.Len() {
			t.Errorf("column %s has %d values, table %d rows", catalog.Fields[f].Name, len(c), tab.Len())
		}
	}
	return tab, rep
}

func near(got, want, relTol float64) bool {
	if math.IsNaN(want) {
		return math.IsNaN(got)
	}
	return math.Abs(got-want) <= relTol*math.Max(1, math.Abs(want))
}

func TestUnitConversions(t *testing.T) {
	spec := catalog.Spec{
		Name: "wren_spec", File: path("units.csv"), Role: catalog.Spectroscopy, EpochJyr: 2020.5,
		Columns: map[string]string{"id": "src", "ra": "RA_h", "distance": "dist"},
		Units: map[string]string{"ra": "hour", "ra_err": "arcsec", "dec_err": "deg",
			"pm_ra": "arcsec/yr", "pm_dec": "arcsec/yr", "rv": "m/s", "rv_err": "m/s",
			"distance": "pc", "distance_err": "pc"},
	}
	tab, rep := mustRead(t, spec)
	if len(rep.Quarantined) != 0 {
		t.Fatalf("unexpected quarantine: %+v", rep.Quarantined)
	}
	if fmt.Sprint(rep.Unused) != "[comment]" {
		t.Errorf("unused headers = %v, want [comment]", rep.Unused)
	}
	// Expected values by the definitions of the units (common practice):
	// 1 h = 15 deg, 1 arcsec = 1000 mas, 1 deg = 3.6e6 mas, 1 km/s = 1000 m/s,
	// 1 kpc = 1000 pc.
	want := []struct {
		f    catalog.Field
		vals []float64
	}{
		{catalog.RA, []float64{0, 180, 352.5}},
		{catalog.Dec, []float64{0, -45.5, 89.9}},
		{catalog.RAErr, []float64{100, 1, 1000}},
		{catalog.DecErr, []float64{720000, 7200, 3.6e6}},
		{catalog.Parallax, []float64{0.5, 1.25, 0}},
		{catalog.PMRA, []float64{12, -100, 0}},
		{catalog.PMDec, []float64{-3, 50, 0}},
		{catalog.RV, []float64{250, -12.3456, 0}},
		{catalog.RVErr, []float64{1.5, 0.1, 0}},
		{catalog.Distance, []float64{1, 8.122, 0.25}},
		{catalog.DistanceErr, []float64{0.05, 0.1, 0.025}},
		{catalog.Mag, []float64{15.2, 17.9, math.NaN()}},
	}
	for _, w := range want {
		t.Run(catalog.Fields[w.f].Name, func(t *testing.T) {
			got := tab.Col(w.f)
			if len(got) != len(w.vals) {
				t.Fatalf("len %d, want %d", len(got), len(w.vals))
			}
			for i := range got {
				if !near(got[i], w.vals[i], 1e-12) {
					t.Errorf("row %d: got %.15g, want %.15g", i, got[i], w.vals[i])
				}
			}
		})
	}
	if tab.Cols[catalog.PMRAErr] != nil || tab.Cols[catalog.DistMod] != nil {
		t.Errorf("absent columns should be nil")
	}
	if fmt.Sprint(tab.IDs) != "[wren-0001 wren-0002 wren-0003]" || fmt.Sprint(tab.Lines) != "[2 3 4]" {
		t.Errorf("ids %v lines %v", tab.IDs, tab.Lines)
	}
	if tab.Name != "wren_spec" || tab.Role != catalog.Spectroscopy || tab.EpochJyr != 2020.5 {
		t.Errorf("table metadata not carried: %+v", tab)
	}
}

func TestDistanceModulus(t *testing.T) {
	spec := catalog.Spec{Name: "heron", File: path("modulus.csv"), Units: map[string]string{"distance": "mag"}}
	tab, _ := mustRead(t, spec)
	// d = 10^(mu/5+1) pc, the definition of the distance modulus
	// mu = 5 log10(d / 10 pc) (common practice): mu = 0 -> 10 pc,
	// mu = 15 -> 10 kpc, mu = -5 -> 1 pc.
	wantKpc := []float64{0.01, 10, 0.001, math.NaN()}
	muErr := []float64{0.1, 0.2, 0, 0.1}
	for i, w := range wantKpc {
		t.Run(tab.IDs[i], func(t *testing.T) {
			if got := tab.Cols[catalog.Distance][i]; !near(got, w, 1e-12) {
				t.Errorf("distance %.15g kpc, want %.15g", got, w)
			}
			if got := tab.Cols[catalog.DistModErr][i]; got != muErr[i] {
				t.Errorf("modulus error kept as %g, want %g", got, muErr[i])
			}
			// Independent check of sigma_d = d ln10/5 sigma_mu: central
			// finite difference of d(mu) (analytic identity to O(h^2)).
			mu := tab.Cols[catalog.DistMod][i]
			if math.IsNaN(w) {
				if !math.IsNaN(mu) || !math.IsNaN(tab.Cols[catalog.DistanceErr][i]) {
					t.Errorf("missing modulus must give NaN modulus and error")
				}
				return
			}
			const h = 1e-5
			dd := (math.Pow(10, (mu+h)/5+1) - math.Pow(10, (mu-h)/5+1)) / (2 * h) / 1000
			if got, want := tab.Cols[catalog.DistanceErr][i], dd*muErr[i]; !near(got, want, 1e-8) {
				t.Errorf("distance error %.12g, want %.12g", got, want)
			}
		})
	}
}

func TestAutomapGzipAndNullMarkers(t *testing.T) {
	nan := math.NaN()
	cases := []struct {
		name      string
		file      string
		markers   []string
		parallax  []float64
		pmRA      []float64
		kept      int
		quarLine  int
		quarCol   int
		quarError error
	}{
		{"default markers", "auto.csv", nil, []float64{0.8, -999}, []float64{-3.5, nan}, 2, 0, 0, nil},
		{"gzip", "auto.csv.gz", nil, []float64{0.8, -999}, []float64{-3.5, nan}, 2, 0, 0, nil},
		{"own markers", "auto.csv", []string{"-999", "null", "NaN"}, []float64{0.8, nan}, []float64{-3.5, nan}, 2, 0, 0, nil},
		// "NaN" is no longer a marker, so the text is refused, not guessed.
		{"NaN not a marker", "auto.csv", []string{"-999", "null"}, []float64{0.8}, []float64{-3.5}, 1, 3, 6, catalog.ErrNotNumber},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			tab, rep := mustRead(t, catalog.Spec{Name: "lark", File: path(c.file), NullMarkers: c.markers})
			if rep.RowsKept != c.kept {
				t.Fatalf("kept %d, want %d (%+v)", rep.RowsKept, c.kept, rep.Quarantined)
			}
			for i := range c.parallax {
				if !near(tab.Cols[catalog.Parallax][i], c.parallax[i], 0) || !near(tab.Cols[catalog.PMRA][i], c.pmRA[i], 0) {
					t.Errorf("row %d: parallax %g pm_ra %g, want %g %g", i, tab.Cols[catalog.Parallax][i], tab.Cols[catalog.PMRA][i], c.parallax[i], c.pmRA[i])
				}
			}
			if c.quarError != nil {
				q := rep.Quarantined[0]
				if q.Line != c.quarLine || q.Column != c.quarCol || !errors.Is(q.Err, c.quarError) {
					t.Errorf("quarantine at %d:%d (%v), want %d:%d (%v)", q.Line, q.Column, q.Err, c.quarLine, c.quarCol, c.quarError)
				}
			}
			if len(rep.Mapped) != 8 || rep.Mapped["fit_residual"] != "fit_residual" {
				t.Errorf("automapping: %v", rep.Mapped)
			}
			if fmt.Sprint(rep.Unused) != "[extra_flux]" {
				t.Errorf("unused = %v", rep.Unused)
			}
			raw, err := os.ReadFile(path(c.file))
			if err != nil {
				t.Fatal(err)
			}
			if sum := sha256.Sum256(raw); rep.SHA256 != hex.EncodeToString(sum[:]) {
				t.Errorf("sha256 %s, want %x", rep.SHA256, sum)
			}
		})
	}
}

func TestExplicitMappingWins(t *testing.T) {
	// parallax is read from the fit_residual column, so fit_residual must not
	// also be automapped from it and the parallax header goes unused.
	tab, rep := mustRead(t, catalog.Spec{File: path("auto.csv"), Columns: map[string]string{"parallax": "fit_residual"}})
	if tab.Cols[catalog.Parallax][0] != 1.02 || tab.Cols[catalog.FitResidual] != nil {
		t.Errorf("parallax %v fit_residual %v", tab.Cols[catalog.Parallax], tab.Cols[catalog.FitResidual])
	}
	if fmt.Sprint(rep.Unused) != "[parallax extra_flux]" {
		t.Errorf("unused = %v", rep.Unused)
	}
}

func TestPositionErrFallback(t *testing.T) {
	tab, rep := mustRead(t, catalog.Spec{File: path("auto.csv"), PositionErrMas: 100})
	if rep.PositionErrFilled != 4 {
		t.Errorf("filled %d, want 4", rep.PositionErrFilled)
	}
	for _, f := range []catalog.Field{catalog.RAErr, catalog.DecErr} {
		if fmt.Sprint(tab.Cols[f]) != "[100 100]" {
			t.Errorf("%s = %v", catalog.Fields[f].Name, tab.Cols[f])
		}
	}
}

func TestQuarantine(t *testing.T) {
	spec := catalog.Spec{Name: "bad", File: path("bad.csv")}
	tab, rep := mustRead(t, spec)
	want := []struct {
		line, col int
		colName   string
		value     string
		err       error
	}{
		{3, 5, "parallax", "abc", catalog.ErrNotNumber},
		{4, 3, "dec", "95.0", catalog.ErrOutOfRange},
		{5, 2, "ra", "360.0", catalog.ErrOutOfRange},
		{6, 4, "ra_err", "-0.1", catalog.ErrOutOfRange},
		{7, 6, "corr_ra_dec", "1.5", catalog.ErrOutOfRange},
		{8, 1, "id", "ok-01", catalog.ErrDuplicateID},
		{9, 1, "id", "", catalog.ErrMissingValue},
		{10, 2, "ra", "", catalog.ErrMissingValue},
		{11, 3, "dec", "null", catalog.ErrMissingValue},
		{12, 6, "", "", catalog.ErrFieldCount},
		{13, 8, "", "", catalog.ErrFieldCount},
		{14, 7, "rv", "inf", catalog.ErrNotNumber},
	}
	if rep.RowsRead != 14 || rep.RowsKept != 2 || len(rep.Quarantined) != len(want) {
		t.Fatalf("read %d kept %d quarantined %d", rep.RowsRead, rep.RowsKept, len(rep.Quarantined))
	}
	if fmt.Sprint(tab.IDs) != "[ok-01 ok-13]" || fmt.Sprint(tab.Lines) != "[2 15]" {
		t.Errorf("kept %v on lines %v", tab.IDs, tab.Lines)
	}
	for i, w := range want {
		q := rep.Quarantined[i]
		t.Run(fmt.Sprintf("line%d", w.line), func(t *testing.T) {
			if q.Line != w.line || q.Column != w.col || q.ColumnName != w.colName || q.Value != w.value {
				t.Errorf("got %d:%d %q=%q, want %d:%d %q=%q", q.Line, q.Column, q.ColumnName, q.Value, w.line, w.col, w.colName, w.value)
			}
			if !errors.Is(q.Err, w.err) || !strings.Contains(q.Reason, w.err.Error()) {
				t.Errorf("error %v reason %q, want %v", q.Err, q.Reason, w.err)
			}
			if len(q.Record) == 0 || q.Record[0] != strings.Split(lineText(t, w.line), ",")[0] {
				t.Errorf("raw record %q not kept", q.Record)
			}
		})
	}
	if !strings.Contains(rep.Quarantined[5].Reason, "first seen on line 2") {
		t.Errorf("duplicate reason %q", rep.Quarantined[5].Reason)
	}
}

func lineText(t *testing.T, line int) string {
	raw, err := os.ReadFile(path("bad.csv"))
	if err != nil {
		t.Fatal(err)
	}
	return strings.Split(string(raw), "\n")[line-1]
}

func TestStrict(t *testing.T) {
	_, _, err := Read(context.Background(), catalog.Spec{File: path("bad.csv")}, catalog.ReadOptions{Strict: true})
	var re *position.Error
	if !errors.As(err, &re) || !errors.Is(err, catalog.ErrNotNumber) {
		t.Fatalf("err = %v, want *position.Error wrapping ErrNotNumber", err)
	}
	want := path("bad.csv") + `:3:5: column "parallax" value "abc": not a number`
	if err.Error() != want || re.Line != 3 || re.Col != 5 || re.Name != "parallax" {
		t.Errorf("error %q, want %q", err.Error(), want)
	}
}

func TestFileErrors(t *testing.T) {
	cases := []struct {
		name  string
		spec  catalog.Spec
		err   error
		also  error
		line  int
		inMsg string
	}{
		{"missing file", catalog.Spec{File: path("no-such.csv")}, catalog.ErrNoFile, fs.ErrNotExist, 0, "no-such.csv"},
		{"no ra column", catalog.Spec{File: path("nora.csv")}, catalog.ErrMissingColumn, nil, 1, "required field ra"},
		{"mapped column absent", catalog.Spec{File: path("auto.csv"), Columns: map[string]string{"rv": "vrad"}}, catalog.ErrMissingColumn, nil, 1, `"vrad"`},
		{"not gzip", catalog.Spec{File: path("corrupt.csv.gz")}, catalog.ErrUnreadable, nil, 0, "gzip"},
		{"truncated gzip", catalog.Spec{File: path("truncated.csv.gz")}, catalog.ErrUnreadable, nil, 1, "unexpected EOF"},
		{"empty file", catalog.Spec{File: path("empty.csv")}, catalog.ErrBadHeader, nil, 1, "empty"},
		{"unknown field", catalog.Spec{File: path("auto.csv"), Columns: map[string]string{"paralax": "x"}}, catalog.ErrBadSpec, nil, 0, `"paralax"`},
		{"derived field", catalog.Spec{File: path("auto.csv"), Columns: map[string]string{"distance_modulus": "x"}}, catalog.ErrBadSpec, nil, 0, `"distance_modulus"`},
		{"unknown unit", catalog.Spec{File: path("auto.csv"), Units: map[string]string{"rv": "furlong/fortnight"}}, catalog.ErrBadSpec, catalog.ErrBadUnit, 0, "furlong"},
		{"mixed modulus", catalog.Spec{File: path("auto.csv"), Units: map[string]string{"distance": "mag", "distance_err": "kpc"}}, catalog.ErrBadSpec, nil, 0, "mag"},
		{"negative fallback", catalog.Spec{File: path("auto.csv"), PositionErrMas: -1}, catalog.ErrBadSpec, nil, 0, "position_err_mas"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, _, err := Read(context.Background(), c.spec, catalog.ReadOptions{})
			var fe *position.Error
			if !errors.As(err, &fe) || !errors.Is(err, c.err) || (c.also != nil && !errors.Is(err, c.also)) {
				t.Fatalf("err = %v, want *position.Error wrapping %v", err, c.err)
			}
			if fe.Line != c.line || fe.File != c.spec.File || !strings.Contains(err.Error(), c.inMsg) || !strings.HasPrefix(err.Error(), c.spec.File+":") {
				t.Errorf("err %q (line %d), want line %d, file prefix and %q", err, fe.Line, c.line, c.inMsg)
			}
		})
	}
}

func TestDuplicateHeader(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "dup.csv")
	if err := os.WriteFile(p, []byte("id,ra,dec,ra\nx,1,2,3\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, _, err := Read(context.Background(), catalog.Spec{File: p}, catalog.ReadOptions{})
	var fe *position.Error
	if !errors.As(err, &fe) || !errors.Is(err, catalog.ErrBadHeader) || fe.Line != 1 || fe.Col != 2 {
		t.Fatalf("err = %v, want bad header at 1:2", err)
	}
}

func TestMalformedQuotesAndBOM(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "q.csv")
	body := "\ufeffid,ra,dec\nq-1,1,2\nq-\"2,3,4\nq-3,5,6\n"
	if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
		t.Fatal(err)
	}
	tab, rep := mustRead(t, catalog.Spec{File: p})
	if fmt.Sprint(tab.IDs) != "[q-1 q-3]" || len(rep.Quarantined) != 1 {
		t.Fatalf("ids %v quarantined %+v", tab.IDs, rep.Quarantined)
	}
	if q := rep.Quarantined[0]; q.Line != 3 || !errors.Is(q.Err, catalog.ErrMalformed) {
		t.Errorf("quarantine %+v, want line 3 malformed", q)
	}
}

func TestMultiChunkHash(t *testing.T) {
	// More than a few hash chunks, so the chunk hand-over is exercised.
	dir := t.TempDir()
	p := filepath.Join(dir, "big.csv")
	var b strings.Builder
	b.WriteString("id,ra,dec\n")
	for i := 0; b.Len() < 5*catalog.HashPieceBytes+123; i++ {
		fmt.Fprintf(&b, "b-%d,%.6f,%.6f\n", i, float64(i%360000)/1000, float64(i%1800)/20-45)
	}
	if err := os.WriteFile(p, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	tab, rep := mustRead(t, catalog.Spec{File: p})
	sum := sha256.Sum256([]byte(b.String()))
	if rep.SHA256 != hex.EncodeToString(sum[:]) {
		t.Errorf("sha256 mismatch")
	}
	if n := strings.Count(b.String(), "\n") - 1; tab.Len() != n {
		t.Errorf("kept %d rows, want %d", tab.Len(), n)
	}
}

func TestCancel(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, _, err := Read(ctx, catalog.Spec{File: path("auto.csv")}, catalog.ReadOptions{}); !errors.Is(err, context.Canceled) {
		t.Errorf("err = %v, want context.Canceled", err)
	}
}

func TestWriteRejected(t *testing.T) {
	_, rep := mustRead(t, catalog.Spec{File: path("bad.csv")})
	out := filepath.Join(t.TempDir(), "bad.rejected.csv")
	if err := catalog.WriteRejected(out, rep.Header, rep.Quarantined); err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(out)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	r := csv.NewReader(f)
	r.FieldsPerRecord = -1
	recs, err := r.ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(recs) != 1+len(rep.Quarantined) {
		t.Fatalf("%d records, want %d", len(recs), 1+len(rep.Quarantined))
	}
	if got := strings.Join(recs[0], ","); got != "reject_line,reject_column,reject_reason,id,ra,dec,ra_err,parallax,corr_ra_dec,rv" {
		t.Errorf("header %q", got)
	}
	// Row 1 is line 3, column 5; the raw fields follow unchanged.
	if got := strings.Join(recs[1], ","); got != "3,5,not a number,"+lineText(t, 3) {
		t.Errorf("first rejected row %q", got)
	}
	if got := strings.Join(recs[11][3:], ","); got != lineText(t, 13) {
		t.Errorf("long row %q kept as %q", lineText(t, 13), got)
	}
}

func TestModulusErrorWithoutModulus(t *testing.T) {
	p := filepath.Join(t.TempDir(), "m.csv")
	if err := os.WriteFile(p, []byte("id,ra,dec,distance_err\nm-1,1,2,0.1\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	tab, _ := mustRead(t, catalog.Spec{File: p, Units: map[string]string{"distance": "mag"}})
	// Without a modulus the distance is unknown, so its error must be too.
	if !math.IsNaN(tab.Cols[catalog.DistanceErr][0]) || tab.Cols[catalog.DistModErr][0] != 0.1 || tab.Cols[catalog.Distance] != nil {
		t.Errorf("distance_err %v, modulus err %v, distance %v", tab.Cols[catalog.DistanceErr], tab.Cols[catalog.DistModErr], tab.Cols[catalog.Distance])
	}
}

func TestMultiLineFieldPositions(t *testing.T) {
	p := filepath.Join(t.TempDir(), "ml.csv")
	body := "id,ra,dec,parallax\n\"ml\n1\",1,2,x\nml-2,3,4,5\nml-3,3,4,y\n"
	if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
		t.Fatal(err)
	}
	_, rep := mustRead(t, catalog.Spec{File: p})
	want := [][2]int{{3, 4}, {5, 4}} // field 4 of the first record is on line 3
	if len(rep.Quarantined) != 2 {
		t.Fatalf("quarantined %+v", rep.Quarantined)
	}
	for i, w := range want {
		if q := rep.Quarantined[i]; q.Line != w[0] || q.Column != w[1] {
			t.Errorf("quarantine %d at %d:%d, want %d:%d", i, q.Line, q.Column, w[0], w[1])
		}
	}
}

func TestEarlyExitStopsGoroutines(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "early.csv.gz")
	f, err := os.Create(p)
	if err != nil {
		t.Fatal(err)
	}
	zw := gzip.NewWriter(f)
	fmt.Fprintln(zw, "id,ra,dec,parallax")
	for i := range 50000 {
		plx := "1.0"
		if i == 10 {
			plx = "oops"
		}
		fmt.Fprintf(zw, "e-%d,%d,0,%s\n", i, i%360, plx)
	}
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
	before := runtime.NumGoroutine()
	_, _, err = Read(context.Background(), catalog.Spec{File: p}, catalog.ReadOptions{Strict: true})
	var re *position.Error
	if !errors.As(err, &re) || re.Line != 12 || re.Col != 4 {
		t.Fatalf("err = %v, want row error at 12:4", err)
	}
	tab, rep, err := Read(context.Background(), catalog.Spec{File: p}, catalog.ReadOptions{})
	if err != nil || tab.Len() != 49999 || rep.RowsRead != 50000 {
		t.Fatalf("non-strict: %v, kept %d of %d", err, tab.Len(), rep.RowsRead)
	}
	for range 100 {
		if runtime.NumGoroutine() <= before {
			return
		}
		time.Sleep(10 * time.Millisecond)
	}
	t.Errorf("%d goroutines left running, %d before", runtime.NumGoroutine(), before)
}
