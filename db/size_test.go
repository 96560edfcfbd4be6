package db

import (
	"context"
	"errors"
	"fmt"
	"os"
	"testing"
)

// TestTableBytes needs -tags sqlite_dbstat; without it TableBytes must say
// so with ErrNoDBStat.
func TestTableBytes(t *testing.T) {
	ctx := context.Background()
	l := openT(t, tempLedger(t), Options{})
	var recs []StarRecord
	for i := range 500 {
		recs = append(recs, record(fmt.Sprintf("s%04d", i), i, 0, "unbound"))
	}
	writeRun(t, l, recs)
	sizes, err := l.TableBytes(ctx)
	if errors.Is(err, ErrNoDBStat) {
		t.Skip(err)
	}
	if err != nil {
		t.Fatal(err)
	}
	var total, pages int64
	got := map[string]TableSize{}
	for _, s := range sizes {
		total += s.Bytes
		pages += s.Pages
		got[s.Name] = s
		if s.Bytes != s.Pages*newLedgerPageSize || s.Payload > s.Bytes {
			t.Errorf("%+v: bytes not pages x %d or payload above bytes", s, newLedgerPageSize)
		}
	}
	var pageCount int64
	if err := l.db.QueryRow("PRAGMA page_count").Scan(&pageCount); err != nil {
		t.Fatal(err)
	}
	// Page 1 holds the header and sqlite_schema; pointer-map pages exist
	// only with auto-vacuum, which the ledger does not use.
	if pages != pageCount {
		t.Errorf("the sizes add up to %d pages, the file has %d", pages, pageCount)
	}
	// Since schema 10 a star's inputs and reasons live in its
	// computed_verdicts row; inputs and reasons are views, with no B-tree.
	for _, name := range []string{"computed_verdicts", "reason_forms", "matches", "computed_verdicts_by_run"} {
		if got[name].Payload == 0 {
			t.Errorf("%s: no payload in %+v", name, got[name])
		}
	}
	for _, view := range []string{"inputs", "reasons", "verdicts"} {
		if s, ok := got[view]; ok {
			t.Errorf("%s is a view, but has a B-tree: %+v", view, s)
		}
	}
	if got["computed_verdicts_by_run"].Table != "computed_verdicts" {
		t.Errorf("index's table = %q", got["computed_verdicts_by_run"].Table)
	}
	n, err := l.ComputedStars(ctx)
	if err != nil || n != 500 {
		t.Errorf("ComputedStars = %d, %v; want 500", n, err)
	}
}

// TestPrintTableBytes prints the table sizes of the ledger named by
// STARVET_TABLE_BYTES (for BENCHMARKS.md), in bytes per stored verdict:
//
//	STARVET_TABLE_BYTES=/path/full_100.db go test -tags sqlite_dbstat ./db -run PrintTableBytes -v
func TestPrintTableBytes(t *testing.T) {
	path := os.Getenv("STARVET_TABLE_BYTES")
	if path == "" {
		t.Skip("STARVET_TABLE_BYTES names no ledger")
	}
	ctx := context.Background()
	l := openT(t, path, Options{ReadOnly: true})
	sizes, err := l.TableBytes(ctx)
	if err != nil {
		t.Fatal(err)
	}
	stars, err := l.ComputedStars(ctx)
	if err != nil || stars == 0 {
		t.Fatalf("%d verdicts, %v", stars, err)
	}
	var total int64
	for _, s := range sizes {
		total += s.Bytes
	}
	fmt.Printf("%d verdicts, %d bytes (%.1f B/star)\n", stars, total, float64(total)/float64(stars))
	fmt.Printf("%-28s %-18s %12s %8s %10s %10s\n", "b-tree", "table", "bytes", "share", "B/star", "payload/star")
	for _, s := range sizes {
		fmt.Printf("%-28s %-18s %12d %7.1f%% %10.1f %10.1f\n", s.Name, s.Table, s.Bytes,
			100*float64(s.Bytes)/float64(total), float64(s.Bytes)/float64(stars), float64(s.Payload)/float64(stars))
	}
}
