package ecsv

import (
	"fmt"
	"strings"

	"starvet/catalog"
)

// WriteTable writes t as ECSV 1.0: "# %ECSV 1.0", a YAML header giving
// each column's name, datatype (float64, int64 or string), unit,
// description and, in the column's meta, its UCD, then the column names
// and rows separated by single spaces. A field that is empty, holds a
// space, tab or double quote, or starts with '#' is double-quoted with
// inner quotes doubled; a null cell is "". A name ending in .gz is
// gzipped.
func WriteTable(path string, t *catalog.OutTable) error {
	if err := t.Check(); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	for j := range t.Columns {
		c := &t.Columns[j]
		if err := writeCheckLine(c.Name); err != nil {
			return fmt.Errorf("%s: column name: %w", path, err)
		}
		for i, s := range c.Text {
			if err := writeCheckLine(s); err != nil {
				return fmt.Errorf("%s: column %q, row %d: %w", path, c.Name, i+1, err)
			}
		}
	}
	o, err := catalog.OutCreate(path)
	if err != nil {
		return err
	}
	o.WriteString("# %ECSV 1.0\n# ---\n# datatype:\n")
	for j := range t.Columns {
		c := &t.Columns[j]
		fmt.Fprintf(o, "# - {name: %s", writeYAML(c.Name))
		if c.Unit != "" {
			fmt.Fprintf(o, ", unit: %s", writeYAML(c.Unit))
		}
		fmt.Fprintf(o, ", datatype: %s", map[string]string{catalog.OutFloat: "float64", catalog.OutInt: "int64", catalog.OutText: "string"}[c.Kind()])
		if c.Description != "" {
			fmt.Fprintf(o, ", description: %s", writeYAML(c.Description))
		}
		if c.UCD != "" {
			fmt.Fprintf(o, ", meta: {ucd: %s}", writeYAML(c.UCD))
		}
		o.WriteString("}\n")
	}
	if t.Name != "" {
		fmt.Fprintf(o, "# meta: {name: %s}\n", writeYAML(t.Name))
	}
	rec := make([]string, len(t.Columns))
	for j := range t.Columns {
		rec[j] = writeField(t.Columns[j].Name)
	}
	o.WriteString(strings.Join(rec, " ") + "\n")
	for i := range t.Len() {
		for j := range t.Columns {
			rec[j] = writeField(t.Columns[j].OutText(i))
		}
		if _, err := o.WriteString(strings.Join(rec, " ") + "\n"); err != nil {
			o.Abort()
			return fmt.Errorf("%s: %w", path, err)
		}
	}
	return o.Close()
}

// writeField quotes a data field as the space-delimited ECSV body needs.
func writeField(s string) string {
	if s != "" && !strings.ContainsAny(s, " \t\"") && s[0] != '#' {
		return s
	}
	return `"` + strings.ReplaceAll(s, `"`, `""`) + `"`
}

// writeCheckLine refuses line breaks, which the one-row-a-line body
// cannot carry.
func writeCheckLine(s string) error {
	if strings.ContainsAny(s, "\r\n") {
		return fmt.Errorf("%q holds a line break, which an ECSV field cannot", s)
	}
	return nil
}

// writeYAML is s as a YAML double-quoted scalar (YAML 1.1 and 1.2): '\'
// and '"' escaped, control characters as \xNN, all else as it is.
func writeYAML(s string) string {
	var b strings.Builder
	b.WriteByte('"')
	for _, r := range s {
		switch {
		case r == '"' || r == '\\':
			b.WriteByte('\\')
			b.WriteRune(r)
		case r < 0x20 || r == 0x7f:
			fmt.Fprintf(&b, "\\x%02x", r)
		default:
			b.WriteRune(r)
		}
	}
	b.WriteByte('"')
	return b.String()
}
