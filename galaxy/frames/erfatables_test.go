package frames

import (
	"bufio"
	"fmt"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"

	"starvet/internal/units"
)

// Reference tables made by ERFA (derived from IAU SOFA) through
// testdata/erfa/gen.c; see testdata/erfa/README.md. No cgo needed.

const erfaDir = "../../testdata/erfa/"

// readTable reads a CSV with '#' comment lines and one header line and
// parses every field as float64; it returns the rows and their line numbers.
// Errors name file:line:col.
func readTable(path, header string) (rows [][]float64, lines []int, err error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, nil, err
	}
	defer f.Close()
	want := strings.Split(header, ",")
	sc := bufio.NewScanner(f)
	line, seenHeader := 0, false
	for sc.Scan() {
		line++
		text := sc.Text()
		if text == "" || strings.HasPrefix(text, "#") {
			continue
		}
		if !seenHeader {
			if text != header {
				return nil, nil, fmt.Errorf("%s:%d:1: header %q, want %q", path, line, text, header)
			}
			seenHeader = true
			continue
		}
		fields := strings.Split(text, ",")
		if len(fields) != len(want) {
			return nil, nil, fmt.Errorf("%s:%d:1: %d fields, want %d", path, line, len(fields), len(want))
		}
		row := make([]float64, len(fields))
		col := 1
		for i, s := range fields {
			if row[i], err = strconv.ParseFloat(s, 64); err != nil {
				return nil, nil, fmt.Errorf("%s:%d:%d: column %s: %w", path, line, col, want[i], err)
			}
			col += len(s) + 1
		}
		rows, lines = append(rows, row), append(lines, line)
	}
	if err := sc.Err(); err != nil {
		return nil, nil, fmt.Errorf("%s:%d: %w", path, line, err)
	}
	if len(rows) < 100 {
		return nil, nil, fmt.Errorf("%s: only %d rows", path, len(rows))
	}
	return rows, lines, nil
}

func TestReadTableErrors(t *testing.T) {
	p := t.TempDir() + "/t.csv"
	if err := os.WriteFile(p, []byte("# c\nl,b\n1,2\n3,4e\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, _, err := readTable(p, "l,b")
	if err == nil || !strings.Contains(err.Error(), "t.csv:4:3: column b") {
		t.Fatalf("error %v, want position t.csv:4:3", err)
	}
}

// TestICRSToGalacticERFATable: eraIcrs2g (ERFA 2.0.0); tolerance 1e-10 rad
// (the task's), measured as an angle on the sky so that the undefined
// longitude at the Galactic poles does not matter.
func TestICRSToGalacticERFATable(t *testing.T) {
	rows, lines, err := readTable(erfaDir+"icrs2g.csv", "ra,dec,l,b")
	if err != nil {
		t.Fatal(err)
	}
	worst := 0.0
	for i, r := range rows {
		l, b := ICRSToGalactic(r[0], r[1])
		s := angle(l, b, r[2], r[3])
		worst = math.Max(worst, s)
		if s > 1e-10 || l < 0 || l >= 2*math.Pi {
			t.Errorf("icrs2g.csv:%d: (l, b) = (%.15f, %.15f), ERFA (%.15f, %.15f)", lines[i], l, b, r[2], r[3])
		}
	}
	t.Logf("%d rows, worst difference %.3g rad", len(rows), worst)
}

// TestGalacticToICRSERFATable: eraG2icrs (ERFA 2.0.0), tolerance 1e-10 rad.
func TestGalacticToICRSERFATable(t *testing.T) {
	rows, lines, err := readTable(erfaDir+"g2icrs.csv", "l,b,ra,dec")
	if err != nil {
		t.Fatal(err)
	}
	worst := 0.0
	for i, r := range rows {
		ra, dec := GalacticToICRS(r[0], r[1])
		s := angle(ra, dec, r[2], r[3])
		worst = math.Max(worst, s)
		if s > 1e-10 || ra < 0 || ra >= 2*math.Pi {
			t.Errorf("g2icrs.csv:%d: (ra, dec) = (%.15f, %.15f), ERFA (%.15f, %.15f)", lines[i], ra, dec, r[2], r[3])
		}
	}
	// Row 1 is the Galactic centre direction quoted in TestSpecialDirections.
	if rows[0][0] != 0 || rows[0][1] != 0 || math.Abs(rows[0][2]/units.RadPerDeg-266.40499) > 5e-6 || math.Abs(rows[0][3]/units.RadPerDeg+28.93617) > 5e-6 {
		t.Errorf("g2icrs.csv:%d: Galactic centre row %v disagrees with the quoted (266.40499, -28.93617) deg", lines[0], rows[0])
	}
	t.Logf("%d rows, worst difference %.3g rad", len(rows), worst)
}
