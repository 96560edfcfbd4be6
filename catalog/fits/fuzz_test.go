package fitscat

import (
	"context"
	"os"
	"path/filepath"
	"runtime"
	"testing"
	"time"

	"starvet/catalog"
)

// FuzzRead: any bytes are a table or an error, never a panic or a hang;
// a table's rows read = kept + quarantined. Seeds: the small fixtures
// (testdata/fits) and the committed corpus (testdata/fuzz/FuzzRead).
func FuzzRead(f *testing.F) {
	for _, name := range []string{"kinds.fits", "bad_rows.fits", "equiv.fits", "missing_end.fits", "truncated_data.fits", "bad_tform.fits", "kinds.fits.gz"} {
		b, err := os.ReadFile(dir + name)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b, "")
	}
	b, _ := os.ReadFile(dir + "kinds.fits")
	f.Add(b, "SECOND")
	f.Add(b, "3")
	f.Fuzz(func(t *testing.T, data []byte, hdu string) {
		p := filepath.Join(t.TempDir(), "f.fits")
		if err := os.WriteFile(p, data, 0o644); err != nil {
			t.Fatal(err)
		}
		ctx, cancel := context.WithTimeout(context.Background(), 10*time.Second)
		defer cancel()
		// A read that never returns would not see ctx: crash with every
		// goroutine's stack instead, so the fuzzer keeps the input.
		watchdog := time.AfterFunc(20*time.Second, func() {
			buf := make([]byte, 1<<20)
			panic("hung:\n" + string(buf[:runtime.Stack(buf, true)]))
		})
		defer watchdog.Stop()
		for _, spec := range []catalog.Spec{
			{Name: "fuzz", File: p, HDU: hdu},
			{Name: "fuzz", File: p, HDU: hdu, Columns: map[string]string{"id": "tag", "parallax": "uk"}},
		} {
			tab, rep, err := Read(ctx, spec, catalog.ReadOptions{Workers: 1})
			if ctx.Err() != nil {
				t.Fatalf("no answer in 10 s (%v)", err)
			}
			if (err == nil) == (tab == nil) {
				t.Fatalf("table %v with error %v", tab != nil, err)
			}
			if err == nil && (rep.RowsRead != rep.RowsKept+len(rep.Quarantined) || tab.Len() != rep.RowsKept) {
				t.Fatalf("read %d, kept %d (table %d), quarantined %d", rep.RowsRead, rep.RowsKept, tab.Len(), len(rep.Quarantined))
			}
			if _, cerr := Columns(spec); err == nil && cerr != nil {
				t.Fatalf("the table reads but its columns do not: %v", cerr)
			}
		}
	})
}
