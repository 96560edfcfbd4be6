package catalog

import (
	"encoding/csv"
	"fmt"
	"os"
	"strconv"
)

// rejectedColumns are the columns WriteRejected puts before the raw row.
var rejectedColumns = [...]string{"reject_line", "reject_column", "reject_reason"}

// WriteRejected writes quarantined rows to path (conventionally
// <catalog>.rejected.csv): a header of reject_line, reject_column,
// reject_reason followed by the catalog's own header, then per row its
// line, 1-based field index (0 = whole row), reason and the raw fields as
// read. Rows whose field count was wrong keep their own count. For a binary
// table the first column is reject_row, the 1-based row, and the fields are
// the row's values as text.
func WriteRejected(path string, header []string, q []Quarantine) (err error) {
	f, err := os.Create(path)
	if err != nil {
		return fmt.Errorf("write rejected rows: %w", err)
	}
	defer func() {
		if cerr := f.Close(); err == nil && cerr != nil {
			err = fmt.Errorf("write rejected rows: %s: %w", path, cerr)
		}
	}()
	w := csv.NewWriter(f)
	rec := append(rejectedColumns[:0:0], rejectedColumns[:]...)
	rows := len(q) > 0 && q[0].Row > 0
	if rows {
		rec[0] = "reject_row"
	}
	if err := w.Write(append(rec, header...)); err != nil {
		return fmt.Errorf("write rejected rows: %s: %w", path, err)
	}
	for _, r := range q {
		at := r.Line
		if rows {
			at = r.Row
		}
		rec = append(rec[:0], strconv.Itoa(at), strconv.Itoa(r.Column), r.Reason)
		if err := w.Write(append(rec, r.Record...)); err != nil {
			return fmt.Errorf("write rejected rows: %s: %w", path, err)
		}
	}
	w.Flush()
	if err := w.Error(); err != nil {
		return fmt.Errorf("write rejected rows: %s: %w", path, err)
	}
	return nil
}
