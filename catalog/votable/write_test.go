package votable_test

import (
	"bytes"
	"encoding/base64"
	"encoding/binary"
	"encoding/xml"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"starvet/catalog"
	votable "starvet/catalog/votable"
)

// writeNine has nine columns, so the BINARY2 null mask takes two bytes
// and the ninth column's bit is the top bit of the second.
func writeNine() *catalog.OutTable {
	nan := math.NaN()
	t := &catalog.OutTable{Name: "nine"}
	for _, c := range []catalog.OutColumn{
		{Name: "id", UCD: "meta.id;meta.main", Text: []string{"a<1>", ""}},
		{Name: "speed", Unit: "km/s", UCD: "phys.veloc", Description: "speed & more", Float: []float64{512.25, nan}},
		{Name: "n", Int: []int64{catalog.OutNullInt, -7}},
		{Name: "f3", Float: []float64{1, 2}},
		{Name: "f4", Float: []float64{nan, 3}},
		{Name: "f5", Float: []float64{4, 5}},
		{Name: "f6", Float: []float64{6, 7}},
		{Name: "f7", Float: []float64{8, nan}},
		{Name: "name", Text: []string{"Ωmega", "\"q\" x"}},
	} {
		t.Columns = append(t.Columns, c)
	}
	return t
}

// writeDoc is the parts of a VOTable document the tests look at.
type writeDoc struct {
	XMLName xml.Name `xml:"VOTABLE"`
	Version string   `xml:"version,attr"`
	Table   struct {
		Name   string `xml:"name,attr"`
		NRows  int    `xml:"nrows,attr"`
		Fields []struct {
			Name        string `xml:"name,attr"`
			Datatype    string `xml:"datatype,attr"`
			Arraysize   string `xml:"arraysize,attr"`
			Unit        string `xml:"unit,attr"`
			UCD         string `xml:"ucd,attr"`
			Description string `xml:"DESCRIPTION"`
		} `xml:"FIELD"`
		Rows   []struct{ TD []string } `xml:"DATA>TABLEDATA>TR"`
		Stream string                  `xml:"DATA>BINARY2>STREAM"`
	} `xml:"RESOURCE>TABLE"`
}

func writeParse(t *testing.T, binary2 bool) *writeDoc {
	t.Helper()
	path := filepath.Join(t.TempDir(), "t.vot")
	if err := votable.WriteTable(path, writeNine(), binary2); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var d writeDoc
	if err := xml.Unmarshal(b, &d); err != nil {
		t.Fatalf("not well-formed XML: %v\n%s", err, b)
	}
	if d.Version != "1.4" || d.Table.Name != "nine" || d.Table.NRows != 2 || len(d.Table.Fields) != 9 {
		t.Fatalf("document %+v", d)
	}
	return &d
}

func TestWriteFields(t *testing.T) {
	d := writeParse(t, false)
	f := d.Table.Fields
	type fd struct{ name, datatype, arraysize, unit, ucd, desc string }
	for i, want := range map[int]fd{
		0: {"id", "char", "*", "", "meta.id;meta.main", ""},
		1: {"speed", "double", "", "km/s", "phys.veloc", "speed & more"},
		2: {"n", "long", "", "", "", ""},
		8: {"name", "unicodeChar", "*", "", "", ""},
	} {
		got := fd{f[i].Name, f[i].Datatype, f[i].Arraysize, f[i].Unit, f[i].UCD, f[i].Description}
		if got != want {
			t.Errorf("FIELD %d = %+v, want %+v", i+1, got, want)
		}
	}
}

// TABLEDATA: a null cell is an empty TD; text comes back unescaped.
func TestWriteTableData(t *testing.T) {
	d := writeParse(t, false)
	want := [][]string{
		{"a<1>", "512.25", "", "1", "", "4", "6", "8", "Ωmega"},
		{"", "", "-7", "2", "3", "5", "7", "", "\"q\" x"},
	}
	for r, row := range d.Table.Rows {
		if strings.Join(row.TD, "|") != strings.Join(want[r], "|") {
			t.Errorf("row %d = %q, want %q", r+1, row.TD, want[r])
		}
	}
	if len(d.Table.Rows) != 2 {
		t.Errorf("%d rows", len(d.Table.Rows))
	}
}

// BINARY2: each row starts with the null mask (bit 7 of byte 0 for the
// first column), then big-endian cells; text is a 4-byte count and the
// characters, unicodeChar as UCS-2.
func TestWriteBinary2NullMask(t *testing.T) {
	d := writeParse(t, true)
	raw, err := base64.StdEncoding.DecodeString(strings.Join(strings.Fields(d.Table.Stream), ""))
	if err != nil {
		t.Fatal(err)
	}
	r := bytes.NewReader(raw)
	next := func(n int) []byte {
		b := make([]byte, n)
		if _, err := r.Read(b); err != nil {
			t.Fatalf("stream ends early: %v", err)
		}
		return b
	}
	// row 1: nulls in n (col 3) and f4 (col 5): 0b00101000, 0b00000000
	// row 2: nulls in id (1), speed (2), f7 (8): 0b11000001, 0b00000000
	for row, mask := range [][2]byte{{0x28, 0x00}, {0xc1, 0x00}} {
		if got := next(2); got[0] != mask[0] || got[1] != mask[1] {
			t.Errorf("row %d mask %08b %08b, want %08b %08b", row+1, got[0], got[1], mask[0], mask[1])
		}
		idLen := binary.BigEndian.Uint32(next(4))
		id := string(next(int(idLen)))
		speed := math.Float64frombits(binary.BigEndian.Uint64(next(8)))
		n := int64(binary.BigEndian.Uint64(next(8)))
		for range 5 {
			next(8)
		}
		nameLen := int(binary.BigEndian.Uint32(next(4)))
		name := next(2 * nameLen)
		switch row {
		case 0:
			if id != "a<1>" || speed != 512.25 || n != 0 || nameLen != 5 || binary.BigEndian.Uint16(name) != 'Ω' {
				t.Errorf("row 1: id %q speed %v n %d name %x", id, speed, n, name)
			}
		case 1:
			if id != "" || !math.IsNaN(speed) || n != -7 || nameLen != 5 {
				t.Errorf("row 2: id %q speed %v n %d name %x", id, speed, n, name)
			}
		}
	}
	if r.Len() != 0 {
		t.Errorf("%d bytes after the last row", r.Len())
	}
}

func TestWriteRefuses(t *testing.T) {
	path := filepath.Join(t.TempDir(), "t.vot")
	bad := &catalog.OutTable{Columns: []catalog.OutColumn{{Name: "x", Text: []string{"bell\a"}}}}
	if err := votable.WriteTable(path, bad, false); err == nil || !strings.Contains(err.Error(), path) {
		t.Errorf("control character: error %v, want one naming %s", err, path)
	}
}
