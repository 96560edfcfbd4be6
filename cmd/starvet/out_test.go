package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"starvet/catalog"
	fitscat "starvet/catalog/fits"
	"starvet/scenario"
)

// list -o writes the verdicts in the format of the file's ending: CSV
// byte for byte as --csv prints it, FITS and ECSV with units and UCDs.
func TestListOut(t *testing.T) {
	p := auditLedger(t)
	dir := t.TempDir()
	stdout, _, code := runCLI(t, "list", "--csv", "--ledger", p)
	if code != 0 {
		t.Fatalf("exit %d", code)
	}
	csvPath := filepath.Join(dir, "v.csv")
	if _, _, code := runCLI(t, "list", "--ledger", p, "-o", csvPath); code != 0 {
		t.Fatalf("exit %d", code)
	}
	if b, err := os.ReadFile(csvPath); err != nil || string(b) != stdout {
		t.Errorf("list -o v.csv (err %v):\n%s\nlist --csv:\n%s", err, b, stdout)
	}

	fitsPath := filepath.Join(dir, "v.fits")
	if _, stderr, code := runCLI(t, "list", "--ledger", p, "--status", "rejected", "-o", fitsPath); code != 0 || !strings.Contains(stderr, "wrote 1 stars of run 2") {
		t.Fatalf("exit %d, stderr %q", code, stderr)
	}
	cols, err := fitscat.Columns(catalog.Spec{File: fitsPath})
	if err != nil {
		t.Fatal(err)
	}
	want := map[string]catalog.ColumnMeta{
		"run_id":          {Name: "run_id", Datatype: "K"},
		"speed_p50_kms":   {Name: "speed_p50_kms", Datatype: "D", Unit: "km s-1", UCD: "phys.veloc"},
		"r_gc_kpc":        {Name: "r_gc_kpc", Datatype: "D", Unit: "kpc"},
		"flight_time_myr": {Name: "flight_time_myr", Datatype: "D", Unit: "Myr"},
		"p_unbound":       {Name: "p_unbound", Datatype: "D", UCD: "stat.probability"},
		"star_id":         {Name: "star_id", Datatype: "6A", UCD: "meta.id;meta.main"},
	}
	for _, c := range cols {
		if w, ok := want[c.Name]; ok {
			if c != w {
				t.Errorf("column %+v, want %+v", c, w)
			}
			delete(want, c.Name)
		}
	}
	if len(want) > 0 {
		t.Errorf("columns %v missing from %+v", want, cols)
	}

	// FITS text is ASCII: a star id beyond it is an error naming the file,
	// and the formats that carry it are named.
	_, stderr, code := runCLI(t, "list", "--ledger", p, "-o", fitsPath)
	if code == 0 || !strings.Contains(stderr, fitsPath) || !strings.Contains(stderr, "VOTable or ECSV") {
		t.Errorf("non-ASCII id to FITS: exit %d, stderr %q", code, stderr)
	}
	if _, err := os.Stat(fitsPath); err == nil {
		t.Errorf("%s left behind after the error", fitsPath)
	}

	ecsvPath := filepath.Join(dir, "v.ecsv")
	if _, _, code := runCLI(t, "list", "--ledger", p, "-o", ecsvPath); code != 0 {
		t.Fatalf("exit %d", code)
	}
	b, _ := os.ReadFile(ecsvPath)
	for _, line := range []string{`# - {name: "speed_p16_kms", unit: "km/s", datatype: float64,`, `# - {name: "r_gc_kpc", unit: "kpc", datatype: float64,`,
		"\n2 Ωμέγα-星-7 accepted pass 2 "} {
		if !strings.Contains(string(b), line) {
			t.Errorf("v.ecsv lacks %q:\n%s", line, b)
		}
	}

	for _, bad := range [][]string{{"list", "--ledger", p, "-o", filepath.Join(dir, "v.txt")}, {"list", "--ledger", p, "--csv", "-o", csvPath}} {
		if _, _, code := runCLI(t, bad...); code != 2 {
			t.Errorf("%q: exit %d, want 2 (usage)", bad, code)
		}
	}
}

// match -o merged.fits writes the merged table as FITS with the units and
// UCDs of its columns, one row per primary source as in CSV.
func TestMatchOutFITS(t *testing.T) {
	dir := t.TempDir()
	sc, err := scenario.Generate(scenario.Config{Seed: 4, Stars: 1000, Samples: 50}, dir)
	if err != nil {
		t.Fatal(err)
	}
	csvPath, fitsPath := filepath.Join(dir, "merged.csv"), filepath.Join(dir, "merged.fits")
	for _, out := range []string{csvPath, fitsPath} {
		var stdout, stderr bytes.Buffer
		if err := Run(context.Background(), []string{"--quiet", "match", sc.CampaignPath, "-o", out}, &stdout, &stderr); err != nil {
			t.Fatalf("match -o %s: %v\n%s", out, err, stderr.String())
		}
	}
	f, err := os.Open(csvPath)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	cols, err := fitscat.Columns(catalog.Spec{File: fitsPath})
	if err != nil {
		t.Fatal(err)
	}
	if len(cols) != len(rows[0]) {
		t.Fatalf("FITS has %d columns, CSV %d", len(cols), len(rows[0]))
	}
	for i, c := range cols {
		if c.Name != rows[0][i] {
			t.Errorf("column %d: FITS %q, CSV %q", i+1, c.Name, rows[0][i])
		}
		switch {
		case c.Name == "id" && c.UCD != "meta.id;meta.main",
			strings.HasSuffix(c.Name, "_sep_arcsec") && (c.Unit != "arcsec" || c.UCD != "pos.angDistance" || c.Datatype != "D"),
			strings.HasSuffix(c.Name, "_match_prob") && (c.Unit != "" || c.UCD != "stat.probability"),
			strings.HasSuffix(c.Name, "_candidates") && c.Datatype != "K":
			t.Errorf("column %+v", c)
		}
	}
	// The merged table holds no positions: dup_count stands in for the
	// ra and dec the reader requires, so that it reads the ids and rows.
	got, rep, err := fitscat.Read(context.Background(), catalog.Spec{Name: "m", File: fitsPath,
		Columns: map[string]string{"ra": "dup_count", "dec": "dup_count"}}, catalog.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if rep.RowsRead != len(rows)-1 || got.IDs[0] != rows[1][0] || got.IDs[len(got.IDs)-1] != rows[len(rows)-1][0] {
		t.Errorf("FITS rows %d (first %q), CSV rows %d (first %q)", rep.RowsRead, got.IDs[0], len(rows)-1, rows[1][0])
	}
	var stdout, stderr bytes.Buffer
	if err := Run(context.Background(), []string{"--quiet", "match", sc.CampaignPath, "-o", filepath.Join(dir, "merged.txt")}, &stdout, &stderr); exitCode(err) != 2 {
		t.Errorf("-o merged.txt: exit %d, want 2 (usage)", exitCode(err))
	}
}
