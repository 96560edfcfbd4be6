package main

import (
	"context"
	"fmt"
	"io"
	"slices"
	"strings"
	"text/tabwriter"

	"starvet/campaign"
	"starvet/catalog"
	"starvet/catalog/ingest"
	"starvet/internal/numfmt"
)

func runColumns(ctx context.Context, env *Env, args []string) error {
	fs := newFlags(env, "columns", "FILE [--format F] [--json]\n       starvet columns --campaign C.toml --catalog NAME [FILE] [--json]",
		"Show how starvet reads a catalog file: one line per column of the file with its\n"+
			"position, name, datatype, unit and UCD as the file states them, then the field it\n"+
			"feeds, why (the campaign names it, its UCD names the quantity, or its name is the\n"+
			"field's) and the unit its values are read in (the campaign's, the file's, or the\n"+
			"field's own when neither gives one); \"-\" marks a column that feeds nothing. The\n"+
			"fields no column feeds follow. A field two columns claim, a unit starvet cannot\n"+
			"convert, or a required field (id, ra, dec) with no column is an error: exit 1.\n\n"+
			"Alone, FILE is read as the campaign would read a [[catalog]] with no columns or\n"+
			"units tables; its name's ending gives the format unless --format does. With\n"+
			"--campaign and --catalog, that catalog's entry (columns, units, format, hdu, table,\n"+
			"delimiter, null markers) applies, to FILE if given, else to the entry's own file.\n"+
			"Formats: "+strings.Join(catalog.FormatNames(), ", ")+".")
	format := fs.String("format", "", "the file's format, overriding its name's ending: "+strings.Join(catalog.FormatNames(), ", "))
	campaignPath := fs.String("campaign", "", "campaign file whose catalog entry applies")
	catName := fs.String("catalog", "", "name of the [[catalog]] entry in --campaign")
	asJSON := fs.Bool("json", false, "print one JSON document instead of the table")
	pos, err := parseArgs(env, fs, args)
	if err != nil {
		return err
	}
	if len(pos) > 1 {
		return usageError("columns takes at most one FILE, got %d arguments", len(pos))
	}
	if *format != "" && !slices.Contains(catalog.FormatNames(), *format) {
		return usageError("--format %q: want one of %s", *format, strings.Join(catalog.FormatNames(), ", "))
	}
	var spec catalog.Spec
	switch {
	case *campaignPath == "" && *catName != "":
		return usageError("columns: --catalog names an entry of --campaign, which is missing")
	case *campaignPath != "":
		c, err := campaign.Load(*campaignPath)
		if err != nil {
			return err
		}
		var names []string
		found := false
		for _, cs := range c.Catalogs {
			names = append(names, cs.Name)
			if cs.Name == *catName {
				spec, found = cs.Spec, true
			}
		}
		if !found {
			if *catName == "" {
				return usageError("columns: --campaign needs --catalog NAME (%s has %s)", *campaignPath, strings.Join(names, ", "))
			}
			return usageError("columns: %s has no catalog %q (it has %s)", *campaignPath, *catName, strings.Join(names, ", "))
		}
		if len(pos) == 1 {
			spec.File = pos[0]
		}
	case len(pos) == 0:
		return usageError("columns wants a FILE, or --campaign and --catalog")
	default:
		spec = catalog.Spec{File: pos[0]}
	}
	formatFrom := "file name"
	if spec.Format != "" {
		formatFrom = "campaign's format key"
	}
	if *format != "" {
		spec.Format, formatFrom = *format, "--format option"
	}
	cols, err := ingest.Columns(ctx, spec)
	if err != nil {
		return err
	}
	rows, missing, derr := spec.Describe(cols)
	d := describeView(spec, formatFrom, rows, missing, derr)
	if *asJSON {
		if err := writeJSON(env.Stdout, d); err != nil {
			return err
		}
	} else if err := writeColumns(env.Stdout, d); err != nil {
		return err
	}
	return derr
}

type columnsView struct {
	File        string          `json:"file"`
	Format      string          `json:"format"`
	FormatFrom  string          `json:"format_from"`
	Catalog     string          `json:"catalog,omitempty"`
	HDU         string          `json:"hdu,omitempty"`
	Table       string          `json:"table,omitempty"`
	Delimiter   string          `json:"delimiter,omitempty"`
	NullMarkers []string        `json:"null_markers"`
	Columns     []columnView    `json:"columns"`
	NotInFile   []string        `json:"not_in_file"`
	Filled      []filledFieldsV `json:"filled,omitempty"`
	Error       string          `json:"error,omitempty"`
}

type columnView struct {
	Position int    `json:"position"`
	Name     string `json:"name"`
	Datatype string `json:"datatype"`
	Unit     string `json:"unit"`
	UCD      string `json:"ucd"`
	Field    string `json:"field"`
	MappedBy string `json:"mapped_by"`
	ReadUnit string `json:"read_unit"`
	UnitFrom string `json:"unit_from"`
}

// filledFieldsV is a field no column feeds that the campaign fills.
type filledFieldsV struct {
	Field string `json:"field"`
	How   string `json:"how"`
}

func describeView(spec catalog.Spec, formatFrom string, rows []catalog.ColumnRow, missing []catalog.Field, err error) columnsView {
	d := columnsView{File: spec.File, Catalog: spec.Name, HDU: spec.HDU, Table: spec.Table, Delimiter: spec.Delimiter,
		NullMarkers: spec.NullMarkers, FormatFrom: formatFrom, Columns: []columnView{}, NotInFile: []string{}}
	d.Format, _ = catalog.FormatOf(spec.File, spec.Format)
	if d.NullMarkers == nil {
		d.NullMarkers = catalog.DefaultNullMarkers()
	}
	for _, r := range rows {
		d.Columns = append(d.Columns, columnView{r.Position, r.Name, r.Datatype, r.Unit, r.UCD, r.Field, r.MappedBy, r.ReadUnit, r.UnitFrom})
	}
	for _, f := range missing {
		d.NotInFile = append(d.NotInFile, catalog.Fields[f].Name)
		if (f == catalog.RAErr || f == catalog.DecErr) && spec.PositionErrMas > 0 {
			d.Filled = append(d.Filled, filledFieldsV{catalog.Fields[f].Name, "position_err_mas = " + numfmt.Exact(spec.PositionErrMas) + " mas"})
		}
	}
	if err != nil {
		d.Error = err.Error()
	}
	return d
}

func writeColumns(w io.Writer, d columnsView) error {
	dash := func(s string) string {
		if s == "" {
			return numfmt.Missing
		}
		return s
	}
	fmt.Fprintf(w, "file:    %s\n", d.File)
	fmt.Fprintf(w, "format:  %s (by the %s)\n", d.Format, d.FormatFrom)
	if d.Catalog != "" {
		fmt.Fprintf(w, "catalog: %s\n", d.Catalog)
	}
	delim := map[string]string{",": "comma", ";": "semicolon", "\t": "tab", " ": "runs of whitespace"}[d.Delimiter]
	for _, kv := range [][2]string{{"hdu", d.HDU}, {"table", d.Table}, {"delimiter", delim}} {
		if kv[1] != "" {
			fmt.Fprintf(w, "%-8s %s\n", kv[0]+":", kv[1])
		}
	}
	quoted := make([]string, len(d.NullMarkers))
	for i, m := range d.NullMarkers {
		quoted[i] = fmt.Sprintf("%q", m)
	}
	if d.Format == catalog.FormatCSV || d.Format == catalog.FormatECSV {
		fmt.Fprintf(w, "nulls:   %s (cells read as missing)\n", strings.Join(quoted, ", "))
	} else {
		fmt.Fprintf(w, "nulls:   as the file marks them (null values, NaN, null masks)\n")
	}
	fmt.Fprintln(w)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "#\tCOLUMN\tTYPE\tUNIT\tUCD\tFIELD\tBY\tREAD IN")
	for _, c := range d.Columns {
		readIn := numfmt.Missing
		if c.ReadUnit != "" {
			readIn = c.ReadUnit + " (" + c.UnitFrom + ")"
		}
		fmt.Fprintf(tw, "%d\t%s\t%s\t%s\t%s\t%s\t%s\t%s\n", c.Position, c.Name, dash(c.Datatype), dash(c.Unit), dash(c.UCD),
			dash(c.Field), dash(c.MappedBy), readIn)
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	not := numfmt.Missing
	if len(d.NotInFile) > 0 {
		not = strings.Join(d.NotInFile, ", ")
	}
	fmt.Fprintf(w, "\nnot in the file: %s\n", not)
	for _, f := range d.Filled {
		fmt.Fprintf(w, "%s is filled from %s\n", f.Field, f.How)
	}
	return nil
}
