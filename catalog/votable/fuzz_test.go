package votable

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"testing"

	"starvet/catalog"
	"starvet/internal/position"
)

// FuzzRead feeds arbitrary documents to Read: it must not panic or hang,
// every error must be a *position.Error, and a table it returns must
// account for every row it read.
func FuzzRead(f *testing.F) {
	for _, name := range []string{"lark_tabledata.vot", "lark_binary.vot", "lark_binary2.vot", "two_tables.vot"} {
		b, err := os.ReadFile(dir + name)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	f.Fuzz(func(t *testing.T, doc []byte) {
		p := filepath.Join(t.TempDir(), "f.vot")
		if err := os.WriteFile(p, doc, 0o644); err != nil {
			t.Fatal(err)
		}
		tab, rep, err := Read(context.Background(), catalog.Spec{Name: "fuzz", File: p}, catalog.ReadOptions{})
		var pe *position.Error
		if err != nil && !errors.As(err, &pe) {
			t.Fatalf("error %v is not a *position.Error", err)
		}
		if err != nil && !errors.Is(err, ErrOverflow) {
			if tab != nil {
				t.Fatalf("a table with the error %v", err)
			}
			return
		}
		if tab.Len() != rep.RowsKept || rep.RowsRead != rep.RowsKept+len(rep.Quarantined) {
			t.Fatalf("read %d, kept %d (table %d), quarantined %d", rep.RowsRead, rep.RowsKept, tab.Len(), len(rep.Quarantined))
		}
	})
}
