package vetting

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"starvet/catalog"
	votable "starvet/catalog/votable"
)

// outReadBack reads a file with astropy and prints, as JSON, each
// column's name, unit (astropy's generic spelling), UCD, description,
// dtype kind and values (null, NaN and "" as null, infinities as text),
// and every warning astropy raised.
const outReadBack = `
import json, math, sys, warnings
import numpy as np
with warnings.catch_warnings(record=True) as caught:
    warnings.simplefilter("always")
    from astropy.table import Table
    from astropy.io import fits
    path, fmt = sys.argv[1], sys.argv[2]
    t = Table.read(path, format={"fits": "fits", "votable": "votable", "ecsv": "ascii.ecsv"}[fmt])
    hdr = fits.getheader(path, 1) if fmt == "fits" else None
    cols = []
    for i, name in enumerate(t.colnames):
        c = t[name]
        mask = np.ma.getmaskarray(c)
        vals = []
        for k in range(len(c)):
            v = c[k]
            if mask[k]:
                vals.append(None)
            elif c.dtype.kind == "f":
                v = float(v)
                vals.append(None if math.isnan(v) else ("inf" if v > 0 else "-inf") if math.isinf(v) else v)
            elif c.dtype.kind in "iu":
                vals.append(int(v))
            else:
                v = v.decode() if isinstance(v, bytes) else str(v)
                vals.append(v if v != "" else None)
        ucd = hdr.get("TUCD%d" % (i + 1), "") if hdr is not None else c.meta.get("ucd", "")
        cols.append({"name": name, "unit": c.unit.to_string() if c.unit is not None else "",
            "ucd": ucd, "description": c.description or "", "kind": c.dtype.kind, "values": vals})
print(json.dumps({"columns": cols, "warnings": ["%s: %s" % (w.category.__name__, w.message) for w in caught]}))
`

// outTools finds fitsverify and a python3 with astropy; without them the
// test skips, or fails when STARVET_REQUIRE_ASTROPY=1.
func outTools(t *testing.T) (python, fitsverify string) {
	t.Helper()
	missing := func(what string) {
		if os.Getenv("STARVET_REQUIRE_ASTROPY") == "1" {
			t.Fatalf("%s not found, and STARVET_REQUIRE_ASTROPY=1", what)
		}
		t.Skipf("%s not found (apt-get install -y python3-astropy fitsverify libcfitsio-bin)", what)
	}
	fitsverify, err := exec.LookPath("fitsverify")
	if err != nil {
		missing("fitsverify")
	}
	for _, p := range []string{"python3", "/usr/bin/python3"} {
		if exec.Command(p, "-c", "import astropy.table, astropy.io.fits").Run() == nil {
			return p, fitsverify
		}
	}
	missing("python3 with astropy")
	return "", ""
}

func outSample(unicode bool) *catalog.OutTable {
	nan := math.NaN()
	id := catalog.FieldColumn(catalog.ID)
	id.UCD += ";meta.main"
	id.Text = []string{"a-1", "it's \"two\" words", "", "#4"}
	pm := catalog.FieldColumn(catalog.PMRA)
	pm.Float = []float64{math.Nextafter(0.3, 1), nan, -1.5e-300, math.Inf(1)}
	t := &catalog.OutTable{Name: "sample", Columns: []catalog.OutColumn{id, pm,
		{Name: "speed", Unit: "km/s", UCD: "phys.veloc", Description: "a speed", Float: []float64{712.375, -0.5, nan, 1e300}},
		{Name: "r_gc", Unit: "kpc", Float: []float64{8.25, 50, nan, 0}},
		{Name: "flight", Unit: "Myr", Float: []float64{55.04, nan, 1, 2}},
		{Name: "sep", Unit: "arcsec", UCD: "pos.angDistance", Float: []float64{0.25, 1, 2, 3}},
		{Name: "p", UCD: "stat.probability", Float: []float64{1, 0, 3.403605097820214e-07, nan}},
		{Name: "count", UCD: "meta.number", Int: []int64{0, catalog.OutNullInt, 1<<53 + 1, -9}},
		{Name: "quality", Text: []string{"pass", "flag", "", "reject"}},
	}}
	if unicode {
		t.Columns = append(t.Columns, catalog.OutColumn{Name: "label", Text: []string{"Ωmega", "", "plain", "ü ü"}})
	}
	return t
}

// Every format read back by astropy gives our names, units, UCDs, types
// and values, with no warning; every FITS file passes fitsverify -q.
func TestWriteOutAstropy(t *testing.T) {
	python, fitsverify := outTools(t)
	dir := t.TempDir()
	generic := map[string]string{"km/s": "km / s", "mas/yr": "mas / yr"}
	for _, tc := range []struct {
		file, format string
		binary2      bool
	}{
		{"out.fits", "fits", false}, {"out.fits.gz", "fits", false},
		{"out.ecsv", "ecsv", false}, {"out.ecsv.gz", "ecsv", false},
		{"out.vot", "votable", false}, {"out-binary2.vot", "votable", true},
	} {
		t.Run(tc.file, func(t *testing.T) {
			path := filepath.Join(dir, tc.file)
			tab := outSample(tc.format != "fits")
			var err error
			if tc.binary2 {
				err = votable.WriteTable(path, tab, true)
			} else {
				err = WriteOut(path, tab)
			}
			if err != nil {
				t.Fatal(err)
			}
			if tc.format == "fits" {
				if out, err := exec.Command(fitsverify, "-q", path).CombinedOutput(); err != nil || !strings.Contains(string(out), "verification OK") {
					t.Errorf("fitsverify -q %s: %v\n%s", tc.file, err, out)
				}
			}
			var stderr bytes.Buffer
			cmd := exec.Command(python, "-c", outReadBack, path, tc.format)
			cmd.Stderr = &stderr
			out, err := cmd.Output()
			if err != nil {
				t.Fatalf("astropy: %v\n%s", err, stderr.String())
			}
			var got struct {
				Columns []struct {
					Name, Unit, UCD, Description, Kind string
					Values                             []any
				}
				Warnings []string
			}
			dec := json.NewDecoder(bytes.NewReader(out))
			dec.UseNumber()
			if err := dec.Decode(&got); err != nil {
				t.Fatalf("%v\n%s", err, out)
			}
			if len(got.Warnings) > 0 {
				t.Errorf("astropy warned: %q", got.Warnings)
			}
			if len(got.Columns) != len(tab.Columns) {
				t.Fatalf("astropy read %d columns, wrote %d", len(got.Columns), len(tab.Columns))
			}
			for j, g := range got.Columns {
				c := &tab.Columns[j]
				unit := c.Unit
				if u, ok := generic[unit]; ok {
					unit = u
				}
				if g.Name != c.Name || g.Unit != unit || g.UCD != c.UCD {
					t.Errorf("column %d: name %q unit %q ucd %q, wrote %q %q %q", j+1, g.Name, g.Unit, g.UCD, c.Name, unit, c.UCD)
				}
				if tc.format != "fits" && g.Description != c.Description {
					t.Errorf("column %q: description %q, wrote %q", c.Name, g.Description, c.Description)
				}
				kind := map[string]string{catalog.OutFloat: "f", catalog.OutInt: "i", catalog.OutText: "U"}[c.Kind()]
				if g.Kind != kind && !(kind == "U" && (g.Kind == "O" || g.Kind == "S" && tc.format == "fits")) {
					t.Errorf("column %q: dtype kind %q, want %q", c.Name, g.Kind, kind)
				}
				for i, v := range g.Values {
					if want := outExpect(c, i); outCell(v) != want {
						t.Errorf("column %q row %d: astropy %q, wrote %q", c.Name, i+1, outCell(v), want)
					}
				}
			}
		})
	}
}

// outExpect is cell i as the comparison spells it: "null", a float in
// the shortest exact form, "inf" or "-inf", an integer, or text.
func outExpect(c *catalog.OutColumn, i int) string {
	switch {
	case c.Float != nil:
		v := c.Float[i]
		switch {
		case math.IsNaN(v):
			return "null"
		case math.IsInf(v, 0):
			return map[bool]string{true: "inf", false: "-inf"}[v > 0]
		}
		return strconv.FormatFloat(v, 'g', -1, 64)
	case c.Int != nil:
		if c.Int[i] == catalog.OutNullInt {
			return "null"
		}
		return strconv.FormatInt(c.Int[i], 10)
	}
	if c.Text[i] == "" {
		return "null"
	}
	return "text:" + c.Text[i]
}

func outCell(v any) string {
	switch x := v.(type) {
	case nil:
		return "null"
	case json.Number:
		if f, err := x.Float64(); err == nil && strings.ContainsAny(x.String(), ".eE") {
			return strconv.FormatFloat(f, 'g', -1, 64)
		}
		return x.String()
	case string:
		if x == "inf" || x == "-inf" {
			return x
		}
		return "text:" + x
	}
	return "?"
}
