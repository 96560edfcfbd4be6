package vetting

import (
	"bufio"
	"context"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"sort"
	"strings"
	"testing"

	"github.com/parquet-go/parquet-go"

	"starvet/campaign"
	"starvet/catalog"
	"starvet/catalog/ecsv"
	fitscat "starvet/catalog/fits"
	"starvet/catalog/ingest"
	parquetcat "starvet/catalog/parquet"
	"starvet/catalog/votable"
	"starvet/db"
)

// sameFormat is one output format the CSV catalogs are converted into.
type sameFormat struct {
	name   string // also the subdirectory of the converted campaign
	suffix string // file ending of the converted catalogs
	write  func(path string, t *catalog.OutTable) error
}

var sameFormats = []sameFormat{
	{"ecsv", ".ecsv", ecsv.WriteTable},
	{"fits", ".fits", fitscat.WriteTable},
	{"fits-gzip", ".fits.gz", fitscat.WriteTable},
	{"votable-binary2", ".vot", func(p string, t *catalog.OutTable) error { return votable.WriteTable(p, t, true) }},
	{"votable-tabledata", ".vot", func(p string, t *catalog.OutTable) error { return votable.WriteTable(p, t, false) }},
	{"parquet", ".parquet", writeParquetOut},
}

// TestSameLedgerEveryFormat (issue item 9b): the invented demo catalogs,
// read from CSV into canonical tables and written again in every other
// format with canonical names and units, give the same ledger as the CSV
// run: the same star ids, and for every star the same verdict row (input
// hash, status, quality and every number) and the same reasons (rule id,
// outcome, severity, value, threshold, message); the same counts per
// status. The CSV run's quarantined rows never reach a canonical table, so
// the converted files do not hold them and the quarantine is not compared.
// The spectroscopic catalog's distance modulus stays a modulus (see
// canonicalOut): written as kpc it gives other input hashes and speeds, as
// the modulus is sampled, not the distance.
func TestSameLedgerEveryFormat(t *testing.T) {
	if testing.Short() {
		t.Skip("runs seven 3,000-star campaigns")
	}
	ctx := context.Background()
	sc := smallScenario(t, 3000, 19)
	csvLedger := filepath.Join(sc.Dir, "csv.db")
	csvRun := runCampaign(t, sc.CampaignPath, csvLedger, false)
	want := ledgerContent(t, csvLedger, csvRun.RunID)
	if len(want.verdicts) == 0 {
		t.Fatal("the CSV run stored no verdicts")
	}

	orig, err := campaign.Load(sc.CampaignPath)
	if err != nil {
		t.Fatal(err)
	}
	tables := make([]*catalog.OutTable, len(orig.Catalogs))
	for i, cs := range orig.Catalogs {
		tab, _, err := ingest.Read(ctx, cs.Spec, catalog.ReadOptions{})
		if err != nil {
			t.Fatal(err)
		}
		tables[i] = canonicalOut(tab)
	}

	for _, f := range sameFormats {
		t.Run(f.name, func(t *testing.T) {
			dir := filepath.Join(sc.Dir, f.name)
			if err := os.MkdirAll(dir, 0o755); err != nil {
				t.Fatal(err)
			}
			files := map[string]string{}
			for i, cs := range orig.Catalogs {
				name := cs.Name + f.suffix
				if err := f.write(filepath.Join(dir, name), tables[i]); err != nil {
					t.Fatalf("writing %s: %v", name, err)
				}
				files[filepath.Base(cs.File)] = name
			}
			path := filepath.Join(dir, "campaign.toml")
			writeConvertedCampaign(t, sc.CampaignPath, path, files)
			checkConvertedCampaign(t, orig, path)
			run := runCampaign(t, path, filepath.Join(dir, "starvet.db"), false)
			got := ledgerContent(t, filepath.Join(dir, "starvet.db"), run.RunID)
			compareLedgers(t, want, got)
			t.Logf("%d stars, counts %v, %d reasons", len(got.verdicts), got.counts, nReasons(got))
		})
	}
}

// canonicalOut is a canonical table as an OutTable: the ids, then every
// column the table has under its canonical name, unit and UCD. A distance
// given as a distance modulus is written as the modulus, named distance
// with unit "mag", as the source catalog gives it: the modulus fields
// cannot be mapped from a file (catalog.Mappable), and the kpc distance
// alone would lose them.
func canonicalOut(tab *catalog.Table) *catalog.OutTable {
	idc := catalog.FieldColumn(catalog.ID)
	idc.Text = tab.IDs
	out := &catalog.OutTable{Name: tab.Name, Columns: []catalog.OutColumn{idc}}
	for f := catalog.Field(1); f < catalog.NumFields; f++ {
		if tab.Cols[f] == nil || !catalog.Mappable(f) {
			continue
		}
		c := catalog.FieldColumn(f)
		c.Float = tab.Cols[f]
		switch {
		case f == catalog.Distance && tab.Cols[catalog.DistMod] != nil:
			c.Float, c.Unit = tab.Cols[catalog.DistMod], catalog.Fields[catalog.DistMod].Unit
		case f == catalog.DistanceErr && tab.Cols[catalog.DistModErr] != nil:
			c.Float, c.Unit = tab.Cols[catalog.DistModErr], catalog.Fields[catalog.DistModErr].Unit
		}
		out.Columns = append(out.Columns, c)
	}
	return out
}

// writeConvertedCampaign copies the campaign at src to dst with each
// catalog's file replaced by files[base name of the old file] and its
// [catalog.columns] and [catalog.units] tables left out; every other line
// is kept as it is.
func writeConvertedCampaign(t *testing.T, src, dst string, files map[string]string) {
	t.Helper()
	in, err := os.Open(src)
	if err != nil {
		t.Fatal(err)
	}
	defer in.Close()
	var b strings.Builder
	skip := false
	replaced := 0
	s := bufio.NewScanner(in)
	for s.Scan() {
		line := s.Text()
		trim := strings.TrimSpace(line)
		if strings.HasPrefix(trim, "[") {
			skip = trim == "[catalog.columns]" || trim == "[catalog.units]"
		}
		if skip {
			continue
		}
		if k, v, ok := strings.Cut(trim, "="); ok && strings.TrimSpace(k) == "file" {
			old := strings.Trim(strings.TrimSpace(v), `"`)
			name, ok := files[filepath.Base(old)]
			if !ok {
				t.Fatalf("campaign %s: file %q was not converted", src, old)
			}
			line = fmt.Sprintf("file = %q", name)
			replaced++
		}
		b.WriteString(line)
		b.WriteByte('\n')
	}
	if err := s.Err(); err != nil {
		t.Fatal(err)
	}
	if replaced != len(files) {
		t.Fatalf("campaign %s: replaced %d file keys, want %d", src, replaced, len(files))
	}
	if err := os.WriteFile(dst, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
}

// checkConvertedCampaign fails unless the converted campaign at path
// equals orig but for the catalogs' files, columns and units (and the
// file's own path and directory).
func checkConvertedCampaign(t *testing.T, orig *campaign.Campaign, path string) {
	t.Helper()
	c, err := campaign.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	a, b := *orig, *c
	a.File, a.Dir, a.Ledger, b.File, b.Dir, b.Ledger = "", "", "", "", "", ""
	a.Catalogs, b.Catalogs = nil, nil
	if !reflect.DeepEqual(a, b) {
		t.Fatalf("converted campaign differs beyond its catalogs:\n%+v\n%+v", a, b)
	}
	if len(orig.Catalogs) != len(c.Catalogs) {
		t.Fatalf("converted campaign has %d catalogs, want %d", len(c.Catalogs), len(orig.Catalogs))
	}
	for i := range orig.Catalogs {
		x, y := orig.Catalogs[i], c.Catalogs[i]
		if len(y.Columns) != 0 || len(y.Units) != 0 {
			t.Fatalf("converted catalog %s keeps columns %v, units %v", y.Name, y.Columns, y.Units)
		}
		x.File, x.Columns, x.Units, x.Line = "", nil, nil, 0
		y.File, y.Columns, y.Units, y.Line = "", nil, nil, 0
		if !reflect.DeepEqual(x, y) {
			t.Fatalf("converted catalog %d differs beyond file, columns and units:\n%+v\n%+v", i+1, x, y)
		}
	}
}

// ledgerRun is what the comparison reads of one run: each star's verdict
// (run ids zeroed) and reasons, and the counts per status.
type ledgerRun struct {
	verdicts map[string]db.VerdictRow
	reasons  map[string][]db.ReasonRow
	counts   map[string]int64
}

func ledgerContent(t *testing.T, path string, run int64) *ledgerRun {
	t.Helper()
	ctx := context.Background()
	l, err := db.Open(ctx, path, db.Options{ReadOnly: true})
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	r := &ledgerRun{verdicts: map[string]db.VerdictRow{}, reasons: map[string][]db.ReasonRow{}}
	err = l.List(ctx, db.ListFilter{Run: run}, func(v db.VerdictRow) error {
		v.RunID, v.ComputedInRun = 0, 0
		r.verdicts[v.StarID] = v
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	for id := range r.verdicts {
		rs, err := l.Reasons(ctx, run, id)
		if err != nil {
			t.Fatal(err)
		}
		r.reasons[id] = rs
	}
	if r.counts, err = l.StatusCounts(ctx, run); err != nil {
		t.Fatal(err)
	}
	return r
}

// compareLedgers reports the stars missing on either side, then for the
// first few differing stars the first differing verdict field or reason,
// then the counts per status.
func compareLedgers(t *testing.T, want, got *ledgerRun) {
	t.Helper()
	ids := make([]string, 0, len(want.verdicts))
	for id := range want.verdicts {
		ids = append(ids, id)
	}
	sort.Strings(ids)
	var missing, extra []string
	for _, id := range ids {
		if _, ok := got.verdicts[id]; !ok {
			missing = append(missing, id)
		}
	}
	for id := range got.verdicts {
		if _, ok := want.verdicts[id]; !ok {
			extra = append(extra, id)
		}
	}
	sort.Strings(extra)
	if len(missing) > 0 || len(extra) > 0 {
		t.Errorf("star ids differ: %d of the CSV run's %d missing (first %v), %d not in it (first %v)",
			len(missing), len(ids), first(missing, 5), len(extra), first(extra, 5))
	}
	ndiff := 0
	for _, id := range ids {
		g, ok := got.verdicts[id]
		if !ok {
			continue
		}
		msg := verdictDiff(want.verdicts[id], g)
		if msg == "" {
			msg = reasonsDiff(want.reasons[id], got.reasons[id])
		}
		if msg != "" {
			ndiff++
			if ndiff <= 5 {
				t.Errorf("star %s: %s", id, msg)
			}
		}
	}
	if ndiff > 0 {
		t.Errorf("%d of %d stars differ from the CSV run", ndiff, len(ids))
	}
	if !reflect.DeepEqual(want.counts, got.counts) {
		t.Errorf("counts per status: CSV run %v, this run %v", want.counts, got.counts)
	}
}

func nReasons(r *ledgerRun) int {
	n := 0
	for _, rs := range r.reasons {
		n += len(rs)
	}
	return n
}

func first(s []string, n int) []string { return s[:min(n, len(s))] }

// verdictDiff names the first field in which b differs from a (NaN equals
// NaN), "" when none does.
func verdictDiff(a, b db.VerdictRow) string {
	va, vb := reflect.ValueOf(a), reflect.ValueOf(b)
	for i := 0; i < va.NumField(); i++ {
		x, y := va.Field(i).Interface(), vb.Field(i).Interface()
		if fx, ok := x.(float64); ok {
			if sameFloat(fx, y.(float64)) {
				continue
			}
		} else if x == y {
			continue
		}
		return fmt.Sprintf("verdict field %s: CSV run %v, this run %v", va.Type().Field(i).Name, x, y)
	}
	return ""
}

// reasonsDiff names the first reason in which b differs from a.
func reasonsDiff(a, b []db.ReasonRow) string {
	for i := range max(len(a), len(b)) {
		switch {
		case i >= len(b):
			return fmt.Sprintf("reason %d %+v missing", i+1, a[i])
		case i >= len(a):
			return fmt.Sprintf("reason %d %+v not in the CSV run", i+1, b[i])
		}
		x, y := a[i], b[i]
		if x.RuleID != y.RuleID || x.Outcome != y.Outcome || x.Severity != y.Severity ||
			!sameFloat(x.Value, y.Value) || x.Threshold != y.Threshold || x.Message != y.Message {
			return fmt.Sprintf("reason %d: CSV run %+v, this run %+v", i+1, x, y)
		}
	}
	return ""
}

func sameFloat(a, b float64) bool {
	return a == b || (math.IsNaN(a) && math.IsNaN(b))
}

// writeParquetOut writes t as a Parquet file: a required STRING column
// for each Text column, an optional DOUBLE for each Float column (a NaN
// written as null), and the units and UCDs in the table_meta_yaml
// key-value metadata the Parquet reader takes them from.
func writeParquetOut(path string, t *catalog.OutTable) error {
	if err := t.Check(); err != nil {
		return err
	}
	g := parquet.Group{}
	var meta strings.Builder
	meta.WriteString("datatype:\n")
	byName := map[string]*catalog.OutColumn{}
	for i := range t.Columns {
		c := &t.Columns[i]
		byName[c.Name] = c
		switch c.Kind() {
		case catalog.OutText:
			g[c.Name] = parquet.String()
			fmt.Fprintf(&meta, "- {name: %s, datatype: string", c.Name)
		case catalog.OutFloat:
			g[c.Name] = parquet.Optional(parquet.Leaf(parquet.DoubleType))
			fmt.Fprintf(&meta, "- {name: %s, datatype: float64", c.Name)
		default:
			return fmt.Errorf("column %s: kind %s not written", c.Name, c.Kind())
		}
		if c.Unit != "" {
			fmt.Fprintf(&meta, ", unit: %q", c.Unit)
		}
		if c.UCD != "" {
			fmt.Fprintf(&meta, ", meta: {ucd: %q}", c.UCD)
		}
		meta.WriteString("}\n")
	}
	schema := parquet.NewSchema(t.Name, g)
	leaves := schema.Columns() // in the schema's (sorted) column order
	cols := make([]*catalog.OutColumn, len(leaves))
	for i, p := range leaves {
		cols[i] = byName[p[0]]
	}
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	w := parquet.NewWriter(f, schema, parquet.KeyValueMetadata(parquetcat.MetaKey, meta.String()))
	rows := make([]parquet.Row, 0, 1024)
	for r := 0; r < t.Len(); r++ {
		row := make(parquet.Row, len(cols))
		for i, c := range cols {
			if c.Text != nil {
				row[i] = parquet.ByteArrayValue([]byte(c.Text[r])).Level(0, 0, i)
			} else if x := c.Float[r]; math.IsNaN(x) {
				row[i] = parquet.NullValue().Level(0, 0, i)
			} else {
				row[i] = parquet.DoubleValue(x).Level(0, 1, i)
			}
		}
		rows = append(rows, row)
		if len(rows) == cap(rows) || r == t.Len()-1 {
			if _, err := w.WriteRows(rows); err != nil {
				f.Close()
				return err
			}
			rows = rows[:0]
		}
	}
	if err := w.Close(); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}
