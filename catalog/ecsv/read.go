package ecsv

import (
	"bytes"
	"context"
	"fmt"
	"regexp"
	"slices"
	"strconv"
	"strings"

	"go.yaml.in/yaml/v3"

	"starvet/catalog"
	csvcat "starvet/catalog/csv"
	"starvet/internal/position"
)

// Reader reads ECSV files; it is the ingest.Reader of catalog.FormatECSV.
type Reader struct{}

// Columns describes the file's columns as its header does.
func (Reader) Columns(_ context.Context, spec catalog.Spec) ([]catalog.ColumnMeta, error) {
	return Columns(spec)
}

// Read ingests the file into canonical units.
func (Reader) Read(ctx context.Context, spec catalog.Spec, opt catalog.ReadOptions) (*catalog.Table, *catalog.Report, error) {
	return Read(ctx, spec, opt)
}

// Read ingests one ECSV file (.ecsv, or .ecsv.gz by suffix). Its errors
// and report are those of csvcat.Read, with the header's problems as
// *position.Error values wrapping catalog.ErrBadHeader.
func Read(ctx context.Context, spec catalog.Spec, opt catalog.ReadOptions) (*catalog.Table, *catalog.Report, error) {
	h := &header{file: spec.File}
	return csvcat.ReadText(ctx, withNull(spec), opt, h.preamble())
}

// Columns describes the columns of an ECSV file: names, datatypes, units,
// and the UCDs their meta gives.
func Columns(spec catalog.Spec) ([]catalog.ColumnMeta, error) {
	h := &header{file: spec.File}
	return csvcat.ColumnsText(spec, h.preamble())
}

// withNull adds the text null to the campaign's null markers.
func withNull(spec catalog.Spec) catalog.Spec {
	if spec.NullMarkers != nil && !slices.Contains(spec.NullMarkers, "null") {
		spec.NullMarkers = append(slices.Clip(spec.NullMarkers), "null")
	}
	return spec
}

// The versions whose header reads as described in package doc; 0.9 files
// differ from 1.0 ones in nothing this reader uses (from memory of APE 6's
// history).
var versions = []string{"1.0", "0.9"}

// datatypes are ECSV 1.0's column datatypes (APE 6, from memory; astropy
// 5.2 writes these names).
var datatypes = []string{"bool", "int8", "int16", "int32", "int64", "uint8", "uint16", "uint32", "uint64",
	"float16", "float32", "float64", "float128", "complex64", "complex128", "complex256", "string"}

// header is one file's ECSV header, as its YAML gives it.
type header struct {
	file string
	doc  document
}

type document struct {
	Datatype  []column  `yaml:"datatype"`
	Delimiter *string   `yaml:"delimiter"`
	Meta      yaml.Node `yaml:"meta"`
	Schema    string    `yaml:"schema"`
}

type column struct {
	Name        *string   `yaml:"name"`
	Datatype    string    `yaml:"datatype"`
	Unit        string    `yaml:"unit"`
	Description string    `yaml:"description"`
	Format      string    `yaml:"format"`
	Subtype     string    `yaml:"subtype"`
	Meta        yaml.Node `yaml:"meta"`
}

func (h *header) preamble() *csvcat.Preamble {
	return &csvcat.Preamble{Comment: '#', Read: h.read, Columns: h.columns}
}

func (h *header) fail(line, col int, name, msg string) *position.Error {
	return &position.Error{File: h.file, Line: line, Col: col, Name: name, Msg: catalog.ErrBadHeader.Error() + ": " + msg, Err: catalog.ErrBadHeader}
}

// read parses the header lines (line 1 first) and returns the delimiter.
func (h *header) read(lines [][]byte) (string, error) {
	if len(lines) == 0 || !isVersionLine(lines[0]) {
		found := "no header line"
		if len(lines) > 0 {
			found = fmt.Sprintf("%.40q", lines[0])
		}
		return "", h.fail(1, 0, "", fmt.Sprintf("not an ECSV file: the first line must be %q, found %s", "# %ECSV 1.0", found))
	}
	var y bytes.Buffer
	for i, l := range lines[1:] {
		switch {
		case len(l) == 1:
		case l[1] == ' ':
			y.Write(l[2:])
		default:
			return "", h.fail(i+2, 2, "", fmt.Sprintf("an ECSV header line starts with \"# \", found %.40q", l))
		}
		y.WriteByte('\n')
	}
	var root yaml.Node
	err := yaml.Unmarshal(y.Bytes(), &root)
	if err == nil {
		err = root.Decode(&h.doc)
	}
	if err != nil {
		return "", h.yamlError(err)
	}
	// entryLine is the file line of datatype entry i.
	entryLine := func(i int) int {
		if doc := root.Content; len(doc) == 1 && doc[0].Kind == yaml.MappingNode {
			m := doc[0].Content
			for k := 0; k+1 < len(m); k += 2 {
				if m[k].Value == "datatype" && i < len(m[k+1].Content) {
					return m[k+1].Content[i].Line + 1
				}
			}
		}
		return 0
	}
	if len(h.doc.Datatype) == 0 {
		return "", h.fail(len(lines), 0, "", "the YAML header lists no columns under datatype (is it cut short?)")
	}
	seen := make(map[string]bool, len(h.doc.Datatype))
	for i, c := range h.doc.Datatype {
		if c.Name == nil || *c.Name == "" {
			return "", h.fail(entryLine(i), 0, "", fmt.Sprintf("datatype entry %d has no name", i+1))
		}
		if seen[*c.Name] {
			return "", h.fail(entryLine(i), 0, *c.Name, fmt.Sprintf("column %q is listed twice", *c.Name))
		}
		seen[*c.Name] = true
		if !slices.Contains(datatypes, c.Datatype) {
			return "", h.fail(entryLine(i), 0, *c.Name, fmt.Sprintf("column %q has datatype %q; ECSV 1.0 allows %v", *c.Name, c.Datatype, datatypes))
		}
	}
	d := " "
	if h.doc.Delimiter != nil {
		d = *h.doc.Delimiter
	}
	if d != " " && d != "," {
		return "", h.fail(len(lines), 0, "delimiter", fmt.Sprintf("delimiter %q: ECSV allows ' ' or ','", d))
	}
	return d, nil
}

func isVersionLine(l []byte) bool {
	rest, ok := bytes.CutPrefix(bytes.TrimRight(l, " \t"), []byte("# %ECSV "))
	return ok && slices.Contains(versions, string(rest))
}

var yamlLine = regexp.MustCompile(`line (\d+)`)

// yamlError words a YAML error with the file's line numbers: the YAML's
// line k is the file's line k+1.
func (h *header) yamlError(err error) error {
	first := 0
	msg := yamlLine.ReplaceAllStringFunc(err.Error(), func(m string) string {
		k, _ := strconv.Atoi(m[len("line "):])
		if first == 0 {
			first = k + 1
		}
		return "line " + strconv.Itoa(k+1)
	})
	return h.fail(first, 0, "", "YAML header: "+msg)
}

// columns checks the column-name line against the header's list and
// describes the columns.
func (h *header) columns(names []string, line int) ([]catalog.ColumnMeta, error) {
	want := h.doc.Datatype
	for i := range max(len(names), len(want)) {
		switch {
		case i >= len(names):
			return nil, h.fail(line, i+1, *want[i].Name, fmt.Sprintf("the column-name line has %d names, the header lists %d columns (missing %q)", len(names), len(want), *want[i].Name))
		case i >= len(want):
			return nil, h.fail(line, i+1, names[i], fmt.Sprintf("the column-name line has %d names, the header lists %d columns (extra %q)", len(names), len(want), names[i]))
		case names[i] != *want[i].Name:
			return nil, h.fail(line, i+1, names[i], fmt.Sprintf("the column-name line has %q where the header lists %q", names[i], *want[i].Name))
		}
	}
	cols := make([]catalog.ColumnMeta, len(want))
	for i, c := range want {
		cols[i] = catalog.ColumnMeta{Name: *c.Name, Datatype: c.Datatype, Unit: unit(c.Unit), UCD: metaUCD(&c.Meta)}
	}
	return cols, nil
}

// unit is a unit as catalog.FileUnit spells it: astropy writes a
// quotient with spaces around the slash ("mas / yr").
func unit(s string) string { return strings.ReplaceAll(s, " / ", "/") }

// metaUCD is the "ucd" entry of a column's meta, a mapping or an ordered
// map (a sequence of one-entry mappings), or "".
func metaUCD(n *yaml.Node) string {
	switch n.Kind {
	case yaml.MappingNode:
		for i := 0; i+1 < len(n.Content); i += 2 {
			if k, v := n.Content[i], n.Content[i+1]; k.Value == "ucd" && v.Kind == yaml.ScalarNode {
				return v.Value
			}
		}
	case yaml.SequenceNode:
		for _, item := range n.Content {
			if u := metaUCD(item); u != "" {
				return u
			}
		}
	}
	return ""
}
