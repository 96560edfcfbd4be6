package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"starvet/verdict"
	"starvet/vetting"
)

// tableRows returns the table lines of `starvet columns` keyed by column
// name, each with its spaces collapsed.
func tableRows(out string) map[string]string {
	rows := map[string]string{}
	for _, line := range strings.Split(out, "\n") {
		f := strings.Fields(line)
		if len(f) == 0 {
			continue
		}
		if _, err := strconv.Atoi(f[0]); err == nil && len(f) > 1 {
			rows[f[1]] = strings.Join(f, " ")
		}
	}
	return rows
}

func TestColumnsCommand(t *testing.T) {
	const dir = "../../testdata/ingest/"
	t.Run("a file alone", func(t *testing.T) {
		out, _, code := runCLI(t, "columns", dir+"auto.csv")
		if code != 0 {
			t.Fatalf("exit %d", code)
		}
		rows := tableRows(out)
		for name, want := range map[string]string{
			"id":           "1 id - - - id name -",
			"ra":           "2 ra - - - ra name deg (canonical)",
			"pm_dec":       "7 pm_dec - - - pm_dec name mas/yr (canonical)",
			"fit_residual": "8 fit_residual - - - fit_residual name -",
			"extra_flux":   "9 extra_flux - - - - - -",
		} {
			if rows[name] != want {
				t.Errorf("row %q = %q, want %q", name, rows[name], want)
			}
		}
		if len(rows) != 9 {
			t.Errorf("%d rows, want one per column of auto.csv (9)", len(rows))
		}
		if !strings.Contains(out, "format:  csv (by the file name)") || !strings.Contains(out, "not in the file: ra_err, dec_err, pm_ra_err,") {
			t.Errorf("output lacks the format or the fields not in the file")
		}
	})
	t.Run("a campaign's entry", func(t *testing.T) {
		out, _, code := runCLI(t, "columns", "--campaign", dir+"campaign/full.toml", "--catalog", "wren_spec")
		if code != 0 {
			t.Fatalf("exit %d", code)
		}
		rows := tableRows(out)
		for name, want := range map[string]string{
			"src":          "1 src - - - id campaign -",
			"RA_h":         "2 RA_h - - - ra campaign hour (campaign)",
			"dec":          "3 dec - - - dec name deg (canonical)",
			"rv":           "10 rv - - - rv name m/s (campaign)",
			"dist":         "12 dist - - - distance campaign pc (campaign)",
			"distance_err": "13 distance_err - - - distance_err name pc (campaign)",
			"comment":      "15 comment - - - - - -",
		} {
			if rows[name] != want {
				t.Errorf("row %q = %q, want %q", name, rows[name], want)
			}
		}
		for _, s := range []string{"catalog: wren_spec", "units.csv", `nulls:   ""`} {
			if !strings.Contains(out, s) {
				t.Errorf("output lacks %q", s)
			}
		}
	})
	t.Run("a campaign's entry applied to another file", func(t *testing.T) {
		data, err := os.ReadFile(dir + "units.csv")
		if err != nil {
			t.Fatal(err)
		}
		p := filepath.Join(t.TempDir(), "release2.csv")
		if err := os.WriteFile(p, data, 0o644); err != nil {
			t.Fatal(err)
		}
		out, _, code := runCLI(t, "columns", "--campaign", dir+"campaign/full.toml", "--catalog", "wren_spec", p)
		if code != 0 || !strings.Contains(out, "file:    "+p) || tableRows(out)["RA_h"] != "2 RA_h - - - ra campaign hour (campaign)" {
			t.Errorf("exit %d; want %s described with wren_spec's columns and units", code, p)
		}
	})
	t.Run("--format overrides the ending", func(t *testing.T) {
		data, err := os.ReadFile(dir + "auto.csv")
		if err != nil {
			t.Fatal(err)
		}
		p := filepath.Join(t.TempDir(), "auto.dat")
		if err := os.WriteFile(p, data, 0o644); err != nil {
			t.Fatal(err)
		}
		if _, stderr, code := runCLI(t, "columns", p); code != 1 || !strings.Contains(stderr, p) {
			t.Errorf("no ending, no --format: exit %d, stderr %q; want 1 naming the file", code, stderr)
		}
		out, _, code := runCLI(t, "columns", p, "--format", "csv")
		if code != 0 || !strings.Contains(out, "csv (by the --format option)") || len(tableRows(out)) != 9 {
			t.Errorf("--format csv: exit %d", code)
		}
	})
	t.Run("json", func(t *testing.T) {
		out, _, code := runCLI(t, "columns", "--json", "--campaign", dir+"campaign/full.toml", "--catalog", "heron_phot")
		if code != 0 {
			t.Fatalf("exit %d", code)
		}
		var d struct {
			File    string `json:"file"`
			Format  string `json:"format"`
			Columns []struct {
				Position int    `json:"position"`
				Name     string `json:"name"`
				Field    string `json:"field"`
				MappedBy string `json:"mapped_by"`
				ReadUnit string `json:"read_unit"`
				UnitFrom string `json:"unit_from"`
			} `json:"columns"`
			NotInFile []string `json:"not_in_file"`
			Filled    []struct{ Field, How string }
		}
		if err := json.Unmarshal([]byte(out), &d); err != nil {
			t.Fatalf("not JSON: %v", err)
		}
		if d.Format != "csv" || !strings.HasSuffix(d.File, "modulus.csv") || len(d.Columns) != 5 {
			t.Fatalf("file %q format %q, %d columns", d.File, d.Format, len(d.Columns))
		}
		last := d.Columns[4]
		if last.Position != 5 || last.Field != "distance_err" || last.ReadUnit != "mag" || last.UnitFrom != "campaign" {
			t.Errorf("distance_err: %+v; want read in mag, as distance is", last)
		}
		if !slices.Contains(d.NotInFile, "ra_err") || len(d.Filled) != 2 || d.Filled[0].How != "position_err_mas = 100 mas" {
			t.Errorf("not in file %v, filled %+v; want ra_err and dec_err filled from the secondary default", d.NotInFile, d.Filled)
		}
	})
	t.Run("mapping errors", func(t *testing.T) {
		tmp := t.TempDir()
		dup := filepath.Join(tmp, "dup.csv")
		if err := os.WriteFile(dup, []byte("id,ra,dec,ra\na,1,2,3\n"), 0o644); err != nil {
			t.Fatal(err)
		}
		for _, c := range []struct {
			args []string
			says []string
		}{
			{[]string{"columns", dir + "nora.csv"}, []string{"nora.csv", "required field(s) ra"}},
			{[]string{"columns", dup}, []string{dup, `"ra"`, "2 times"}},
			{[]string{"columns", "--campaign", dir + "campaign/full.toml", "--catalog", "wren_spec", dir + "auto.csv"}, []string{"auto.csv", `"src"`}},
		} {
			out, stderr, code := runCLI(t, c.args...)
			if code != 1 {
				t.Errorf("%v: exit %d, want 1", c.args, code)
			}
			for _, s := range c.says {
				if !strings.Contains(stderr, s) {
					t.Errorf("%v: stderr %q does not say %s", c.args, stderr, s)
				}
			}
			if len(tableRows(out)) == 0 {
				t.Errorf("%v: no table before the error", c.args)
			}
		}
	})
	t.Run("a file the build may not read", func(t *testing.T) {
		p := filepath.Join(t.TempDir(), "stars.parquet")
		if err := os.WriteFile(p, []byte("not a parquet file\n"), 0o644); err != nil {
			t.Fatal(err)
		}
		out, stderr, code := runCLI(t, "columns", p)
		if code != 1 || !strings.Contains(stderr, p) || len(tableRows(out)) != 0 {
			t.Errorf("exit %d, stderr %q, %d rows; want 1 and an error naming the file, no table", code, stderr, len(tableRows(out)))
		}
	})
	t.Run("usage", func(t *testing.T) {
		for _, args := range [][]string{
			{"columns"},
			{"columns", "a.csv", "b.csv"},
			{"columns", "a.csv", "--format", "spreadsheet"},
			{"columns", "--catalog", "lark_astro", "a.csv"},
			{"columns", "--campaign", dir + "campaign/full.toml"},
			{"columns", "--campaign", dir + "campaign/full.toml", "--catalog", "nope"},
		} {
			if _, _, code := runCLI(t, args...); code != 2 {
				t.Errorf("%v: exit %d, want 2", args, code)
			}
		}
		out, _, code := runCLI(t, "columns", "--help")
		if code != 0 || !strings.Contains(out, "Usage: starvet columns") || !strings.Contains(out, "UCD") || !strings.Contains(out, "--campaign") {
			t.Errorf("columns --help: exit %d", code)
		}
		out, _, code = runCLI(t, "--help")
		if code != 0 || !strings.Contains(out, "\n  columns ") {
			t.Errorf("starvet --help: exit %d, no columns line", code)
		}
	})
}

// A catalog's warning (a query result cut short by the service) is
// printed in the run's summary, not only logged.
func TestSummaryPrintsWarnings(t *testing.T) {
	var b strings.Builder
	printSummary(&b, &vetting.Summary{RunID: 3, Counts: map[verdict.Status]int{}, Warnings: []string{`finch.vot: table "main": VOTable query result is truncated`}})
	if !strings.Contains(b.String(), "WARNING: finch.vot: table \"main\": VOTable query result is truncated\n") {
		t.Errorf("summary:\n%s", b.String())
	}
}
