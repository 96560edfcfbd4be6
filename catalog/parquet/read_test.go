package parquetcat

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"starvet/catalog"
	"starvet/internal/position"
)

// The fixtures are written by DuckDB (testdata/parquet/make_fixtures.js);
// the values compared with below are the ones that script states.
const dir = "../../testdata/parquet/"

func read(t *testing.T, file string, spec catalog.Spec, opt catalog.ReadOptions) (*catalog.Table, *catalog.Report, error) {
	t.Helper()
	spec.Name, spec.File = "fixture", dir+file
	return Read(context.Background(), spec, opt)
}

// specialRow is the file row of the script's special row k.
func specialRow(k int) int {
	if k <= 6 {
		return k
	}
	return k + 4096
}

func TestTypedFileEveryCompression(t *testing.T) {
	for _, file := range []string{"types_snappy.parquet", "types_zstd.parquet", "types_gzip.parquet"} {
		t.Run(file, func(t *testing.T) {
			tab, rep, err := read(t, file, catalog.Spec{}, catalog.ReadOptions{})
			if err != nil {
				t.Fatal(err)
			}
			// DuckDB: 12 special rows + 4096 filler rows; 4 set aside.
			if rep.RowsRead != 4108 || rep.RowsKept != 4104 || tab.Len() != 4104 || rep.RowsRead != rep.RowsKept+len(rep.Quarantined) {
				t.Fatalf("read %d, kept %d (table %d), quarantined %d", rep.RowsRead, rep.RowsKept, tab.Len(), len(rep.Quarantined))
			}
			wantQ := []struct {
				k      int
				col    string
				err    error
				group  string
				value  string
				field0 string // first field of the record as text
			}{
				{4, "id", catalog.ErrMissingValue, "(row group 1)", "", ""},
				{5, "pm_ra", catalog.ErrNotNumber, "(row group 1)", "+Inf", "kx-005"},
				{7, "ra", catalog.ErrMissingValue, "(row group 3)", "NaN", "kx-007"},
				{10, "dec", catalog.ErrOutOfRange, "(row group 3)", "95", "kx-010"},
			}
			for i, w := range wantQ {
				q := rep.Quarantined[i]
				if q.Row != specialRow(w.k) || q.Line != 0 || q.ColumnName != w.col || !errors.Is(q.Err, w.err) ||
					!strings.HasSuffix(q.Reason, w.group) || q.Value != w.value {
					t.Errorf("quarantine %d: %+v, want row %d column %s %v %s value %q", i, q, specialRow(w.k), w.col, w.err, w.group, w.value)
				}
				if len(q.Record) != 12 || q.Record[0] != w.field0 {
					t.Errorf("quarantine %d: record %q, want 12 fields starting %q", i, q.Record, w.field0)
				}
			}
			// Row 4's record: the null id as "", the others as DuckDB stored them.
			if got := strings.Join(rep.Quarantined[0].Record, ","); got != ",13,-23,0.5,1,1,1,1,1,false,17,1.5" {
				t.Errorf("row 4 record %q", got)
			}
			idx := make(map[string]int, tab.Len())
			for i, id := range tab.IDs {
				idx[id] = i
			}
			nan := math.NaN()
			for _, w := range []struct {
				id   string
				row  int
				vals map[catalog.Field]float64
			}{
				{"kx-001", 1, map[catalog.Field]float64{catalog.RA: 10.5, catalog.Dec: -20.25, catalog.Parallax: 1.5, catalog.PMRA: 3.25,
					catalog.RV: -120, catalog.FitVisits: 12, catalog.SNR: 40, catalog.ExcessNoiseSig: 7, catalog.DuplicateFlag: 0,
					catalog.Mag: 14.5, catalog.Color: 0.75}},
				// null FLOAT -> missing; BOOLEAN true -> 1
				{"kx-002", 2, map[catalog.Field]float64{catalog.Parallax: nan, catalog.DuplicateFlag: 1, catalog.RV: 35}},
				// null SMALLINT -> missing; USMALLINT 65535; BIGINT 2^53+1 rounds to 2^53 in float64;
				// UBIGINT 2^64-1 read unsigned (1.8446744073709552e19, not -1)
				{"kx-003", 3, map[catalog.Field]float64{catalog.RV: nan, catalog.FitVisits: 65535, catalog.SNR: 9007199254740992,
					catalog.ExcessNoiseSig: 18446744073709551615, catalog.Parallax: 0.25}},
				// a stored NaN -> missing
				{"kx-006", 6, map[catalog.Field]float64{catalog.Color: nan, catalog.RV: -32768, catalog.SNR: -5, catalog.ExcessNoiseSig: 0}},
				// null USMALLINT -> missing
				{"kx-008", specialRow(8), map[catalog.Field]float64{catalog.FitVisits: nan, catalog.RA: 17}},
				{"kx-011", specialRow(11), map[catalog.Field]float64{catalog.RA: 359.875, catalog.Dec: -89.5, catalog.RV: 32767}},
				{"kx-012", specialRow(12), map[catalog.Field]float64{catalog.RA: 0, catalog.Dec: 0, catalog.Mag: 21}},
				{"fill-0", 7, map[catalog.Field]float64{catalog.RA: 0, catalog.Dec: -45, catalog.DuplicateFlag: 1}},
				{"fill-4095", 4102, map[catalog.Field]float64{catalog.RA: 4095.0 / 16, catalog.Mag: 17}},
			} {
				i, ok := idx[w.id]
				if !ok {
					t.Errorf("%s not kept", w.id)
					continue
				}
				if tab.Lines[i] != w.row {
					t.Errorf("%s: row %d, want %d", w.id, tab.Lines[i], w.row)
				}
				for f, want := range w.vals {
					got := tab.Cols[f][i]
					if got != want && !(math.IsNaN(want) && math.IsNaN(got)) {
						t.Errorf("%s %s = %v, want %v", w.id, catalog.Fields[f].Name, got, want)
					}
				}
			}
			for i := 1; i < tab.Len(); i++ {
				if tab.Lines[i] <= tab.Lines[i-1] {
					t.Fatalf("rows out of file order at %d: %d after %d", i, tab.Lines[i], tab.Lines[i-1])
				}
			}
			raw, err := os.ReadFile(dir + file)
			if err != nil {
				t.Fatal(err)
			}
			if sum := sha256.Sum256(raw); rep.SHA256 != hex.EncodeToString(sum[:]) {
				t.Errorf("SHA256 %s, want %x", rep.SHA256, sum)
			}
		})
	}
}

// One worker or many: the same table, row for row.
func TestWorkersKeepFileOrder(t *testing.T) {
	one, _, err := read(t, "types_zstd.parquet", catalog.Spec{}, catalog.ReadOptions{Workers: 1})
	if err != nil {
		t.Fatal(err)
	}
	many, _, err := read(t, "types_zstd.parquet", catalog.Spec{}, catalog.ReadOptions{Workers: 4})
	if err != nil {
		t.Fatal(err)
	}
	sameTable(t, one, many)
}

func TestStrictStopsAtFirstBadRow(t *testing.T) {
	_, _, err := read(t, "types_snappy.parquet", catalog.Spec{}, catalog.ReadOptions{Strict: true})
	var pe *position.Error
	// DuckDB row 4 has a null id.
	if !errors.As(err, &pe) || pe.Row != 4 || pe.Name != "id" || !errors.Is(err, catalog.ErrMissingValue) ||
		!strings.Contains(err.Error(), "types_snappy.parquet: row 4") || !strings.Contains(err.Error(), "row group 1") {
		t.Errorf("strict: %v", err)
	}
}

func TestIntegerIDsAsDecimalText(t *testing.T) {
	for file, want := range map[string][]string{
		"int_id.parquet":  {"-7", "9223372036854775807"},  // DuckDB BIGINT
		"uint_id.parquet": {"18446744073709551615", "42"}, // DuckDB UBIGINT
	} {
		tab, _, err := read(t, file, catalog.Spec{}, catalog.ReadOptions{})
		if err != nil {
			t.Fatal(err)
		}
		if strings.Join(tab.IDs, " ") != strings.Join(want, " ") || tab.Cols[catalog.RA][1] != 3 {
			t.Errorf("%s: ids %q ra %v", file, tab.IDs, tab.Cols[catalog.RA])
		}
	}
}

func TestUnitsAndUCDsFromMetadata(t *testing.T) {
	cols, err := Columns(catalog.Spec{File: dir + "units.parquet"})
	if err != nil {
		t.Fatal(err)
	}
	// From the script's table_meta_yaml (flow and block entries alike).
	want := []catalog.ColumnMeta{
		{Name: "star_ref", Datatype: "INT64/INT(64,true)", UCD: "meta.id"},
		{Name: "alpha", Datatype: "DOUBLE", Unit: "deg", UCD: "pos.eq.ra"},
		{Name: "delta", Datatype: "DOUBLE", Unit: "deg", UCD: "pos.eq.dec"},
		{Name: "plx_a", Datatype: "DOUBLE", Unit: "uas", UCD: "pos.parallax.trig"},
		{Name: "pm_ra", Datatype: "DOUBLE", Unit: "mas.yr**-1"},
	}
	if len(cols) != len(want) {
		t.Fatalf("columns %+v", cols)
	}
	for i := range want {
		if cols[i] != want[i] {
			t.Errorf("column %d: %+v, want %+v", i, cols[i], want[i])
		}
	}
	tab, rep, err := read(t, "units.parquet", catalog.Spec{}, catalog.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	// plx_a 1500 uas = 1.5 mas, 250 uas = 0.25 mas; mapped by UCD.
	if tab.IDs[0] != "501" || tab.Cols[catalog.Parallax][0] != 1.5 || tab.Cols[catalog.Parallax][1] != 0.25 ||
		tab.Cols[catalog.RA][1] != 21 || rep.MappedBy["parallax"] != catalog.ByUCD || rep.Mapped["parallax"] != "plx_a" ||
		rep.MappedBy["pm_ra"] != catalog.ByName {
		t.Errorf("ids %q parallax %v ra %v mapped %v by %v", tab.IDs, tab.Cols[catalog.Parallax], tab.Cols[catalog.RA], rep.Mapped, rep.MappedBy)
	}
	// The campaign's unit wins over the file's.
	tab, _, err = read(t, "units.parquet", catalog.Spec{Units: map[string]string{"parallax": "mas"}}, catalog.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if tab.Cols[catalog.Parallax][0] != 1500 {
		t.Errorf("campaign unit: parallax %v, want 1500", tab.Cols[catalog.Parallax])
	}
}

func TestFileWithoutMetadataHasNoUnits(t *testing.T) {
	cols, err := Columns(catalog.Spec{File: dir + "types_gzip.parquet"})
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range cols {
		if c.Unit != "" || c.UCD != "" {
			t.Errorf("%+v: want no unit and no UCD", c)
		}
	}
	// DuckDB's types, as parquet-go names the physical and logical ones.
	if cols[0].Datatype != "BYTE_ARRAY/STRING" || cols[6].Datatype != "INT32/INT(16,false)" || cols[9].Datatype != "BOOLEAN" || cols[3].Datatype != "FLOAT" {
		t.Errorf("datatypes %+v", cols)
	}
}

func TestDecimalColumnRefused(t *testing.T) {
	_, _, err := read(t, "decimal_ra.parquet", catalog.Spec{}, catalog.ReadOptions{})
	var pe *position.Error
	if !errors.As(err, &pe) || pe.Name != "ra" || !errors.Is(err, catalog.ErrBadHeader) || !strings.Contains(err.Error(), "DECIMAL") {
		t.Errorf("decimal ra: %v", err)
	}
}

func TestBrokenFilesAreErrors(t *testing.T) {
	for file, says := range map[string]string{
		"truncated.parquet":     "invalid magic footer", // parquet-go's words for the missing closing magic
		"broken_footer.parquet": "does not fit",         // a footer length of 0x7fffffff
	} {
		tab, _, err := read(t, file, catalog.Spec{}, catalog.ReadOptions{})
		var pe *position.Error
		if tab != nil || !errors.As(err, &pe) || pe.File != dir+file || !errors.Is(err, catalog.ErrUnreadable) ||
			!strings.Contains(err.Error(), "truncated, or its footer is broken") || !strings.Contains(err.Error(), says) {
			t.Errorf("%s: table %v, error %v", file, tab != nil, err)
		}
		if _, err := Columns(catalog.Spec{File: dir + file}); !errors.Is(err, catalog.ErrUnreadable) {
			t.Errorf("%s: Columns: %v", file, err)
		}
	}
	_, rep, err := read(t, "no-such.parquet", catalog.Spec{}, catalog.ReadOptions{})
	if !errors.Is(err, catalog.ErrNoFile) || rep != nil {
		t.Errorf("missing file: %v", err)
	}
}

// A data page of row group 2 overwritten with 0xff, the footer intact: an
// error naming the row group and a column, and no table.
func TestDamagedPageIsAnError(t *testing.T) {
	raw, err := os.ReadFile(dir + "types_snappy.parquet")
	if err != nil {
		t.Fatal(err)
	}
	pf, err := open(dir + "types_snappy.parquet")
	if err != nil {
		t.Fatal(err)
	}
	md := pf.pf.Metadata().RowGroups[1].Columns[1].MetaData // ra, row group 2
	pf.close()
	at := md.DataPageOffset
	for i := at; i < at+32 && i < int64(len(raw)); i++ {
		raw[i] = 0xff
	}
	p := filepath.Join(t.TempDir(), "damaged.parquet")
	if err := os.WriteFile(p, raw, 0o644); err != nil {
		t.Fatal(err)
	}
	tab, _, err := Read(context.Background(), catalog.Spec{Name: "d", File: p}, catalog.ReadOptions{})
	t.Log(err)
	var pe *position.Error
	if tab != nil || !errors.As(err, &pe) || pe.Name != "ra" || pe.Row != 2049 || !errors.Is(err, catalog.ErrUnreadable) ||
		!strings.Contains(err.Error(), "row group 2") {
		t.Errorf("damaged page: table %v, error %v (%+v)", tab != nil, err, pe)
	}
}

func TestCanceledContext(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	tab, _, err := Read(ctx, catalog.Spec{Name: "c", File: dir + "types_zstd.parquet"}, catalog.ReadOptions{})
	if tab != nil || !errors.Is(err, context.Canceled) {
		t.Errorf("canceled: table %v, error %v", tab != nil, err)
	}
}

func sameTable(t *testing.T, a, b *catalog.Table) {
	t.Helper()
	if a.Len() != b.Len() {
		t.Fatalf("lengths %d and %d", a.Len(), b.Len())
	}
	for i := range a.IDs {
		if a.IDs[i] != b.IDs[i] {
			t.Fatalf("row %d: ids %q and %q", i, a.IDs[i], b.IDs[i])
		}
	}
	for f := range a.Cols {
		ca, cb := a.Cols[f], b.Cols[f]
		if (ca == nil) != (cb == nil) || len(ca) != len(cb) {
			t.Fatalf("%s: columns of %d and %d", catalog.Fields[f].Name, len(ca), len(cb))
		}
		for i := range ca {
			if math.Float64bits(ca[i]) != math.Float64bits(cb[i]) {
				t.Fatalf("%s row %d: %v and %v", catalog.Fields[f].Name, i, ca[i], cb[i])
			}
		}
	}
}
