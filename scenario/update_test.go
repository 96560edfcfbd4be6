package scenario

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"starvet/catalog"
)

func TestUpdate(t *testing.T) {
	s, dir := generate(t, 21)
	_, before := readAll(t, dir)
	truth1 := append([]TruthRow(nil), s.Truth...)
	if err := Update(s, dir, 99); err != nil {
		t.Fatal(err)
	}
	c, after := readAll(t, dir)
	t.Run("campaign", func(t *testing.T) {
		for _, cat := range c.Catalog {
			switch cat.Role {
			case "astrometry", "spectroscopy":
				if cat.Release != "R2" || !strings.Contains(cat.File, "_r2.") {
					t.Errorf("%s: release %q file %q, want R2 and an _r2 file", cat.Name, cat.Release, cat.File)
				}
			case "photometry":
				if cat.Release != "R1" {
					t.Errorf("photometry release %q, want R1 (unchanged)", cat.Release)
				}
			}
		}
		for _, f := range []string{"pelmarra_r1.csv.gz", "vossbeck_r1.csv"} {
			if _, err := os.Stat(filepath.Join(dir, f)); err != nil {
				t.Errorf("release 1 file gone: %v", err)
			}
		}
	})

	changed := map[string]bool{}
	for _, id := range s.Changed {
		changed[id] = true
	}
	t.Run("astrometry", func(t *testing.T) {
		a1, a2 := before["astrometry"].table, after["astrometry"].table
		if a1.Len() != a2.Len() {
			t.Fatalf("rows %d -> %d", a1.Len(), a2.Len())
		}
		revised, smaller := 0, 0
		for i, id := range a1.IDs {
			if a2.IDs[i] != id {
				t.Fatalf("row %d: id %s -> %s", i, id, a2.IDs[i])
			}
			diff := false
			for f := range catalog.NumFields {
				c1, c2 := a1.Cols[f], a2.Cols[f]
				if c1 == nil {
					continue
				}
				if c1[i] != c2[i] && !(math.IsNaN(c1[i]) && math.IsNaN(c2[i])) {
					diff = true
				}
			}
			if diff {
				revised++
				if !changed[id] {
					t.Errorf("%s: astrometry changed but not listed in Changed", id)
				}
				if r := a2.Cols[catalog.ParallaxErr][i] / a1.Cols[catalog.ParallaxErr][i]; r < 0.5*0.6 || r > 0.8*1.6 {
					t.Errorf("%s: parallax_err ratio %v", id, r)
				} else if r < 1 {
					smaller++
				}
			}
		}
		// About 2% of the ordinary rows; 5-sigma binomial band.
		n := float64(a1.Len())
		p := revisedFraction
		if d := math.Abs(float64(revised) - p*n); d > 5*math.Sqrt(n*p*(1-p)) {
			t.Errorf("%d rows revised of %v, want about %v", revised, n, p*n)
		}
		// Errors 0.5-0.8 times the old, each with 10% scatter: most shrink.
		if smaller < revised*9/10 {
			t.Errorf("only %d of %d revised rows have smaller parallax errors", smaller, revised)
		}
	})
	t.Run("spectroscopy", func(t *testing.T) {
		r1, err := os.ReadFile(filepath.Join(dir, "vossbeck_r1.csv"))
		if err != nil {
			t.Fatal(err)
		}
		r2, err := os.ReadFile(s.SpectroscopyPath)
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.HasPrefix(r2, r1) {
			t.Fatalf("release 2 does not start with the rows of release 1")
		}
		extra := strings.Split(strings.TrimSpace(string(r2[len(r1):])), "\n")
		if len(extra) == 0 || extra[0] == "" {
			t.Fatalf("no new spectra")
		}
		hosts := map[string]string{}
		for _, st := range s.stars {
			if st.spec != nil {
				hosts[st.spec.id] = st.id
			}
		}
		for _, line := range extra {
			id := strings.SplitN(line, ",", 2)[0]
			h, ok := hosts[id]
			if !ok {
				t.Errorf("new spectrum %s has no host", id)
				continue
			}
			if !changed[h] {
				t.Errorf("%s got spectrum %s but is not in Changed", h, id)
			}
		}
		if got := after["spectroscopy"].report.RowsRead; got != before["spectroscopy"].report.RowsRead+len(extra) {
			t.Errorf("rows %d, want %d + %d", got, before["spectroscopy"].report.RowsRead, len(extra))
		}
	})
	t.Run("truth", func(t *testing.T) {
		rows, err := LoadTruth(s.TruthPath)
		if err != nil {
			t.Fatal(err)
		}
		gained := 0
		for i, r := range rows {
			if !sameTruth(r, s.Truth[i]) {
				t.Fatalf("%s: truth file and memory differ", r.StarID)
			}
			if r.HasSpectrum && !truth1[i].HasSpectrum {
				gained++
				if !changed[r.StarID] {
					t.Errorf("%s: gained a spectrum, not in Changed", r.StarID)
				}
			}
			if r.TrulyUnbound != truth1[i].TrulyUnbound || r.Population != truth1[i].Population {
				t.Errorf("%s: physical truth changed in an update", r.StarID)
			}
		}
		if gained == 0 {
			t.Errorf("no star gained a spectrum")
		}
	})
	t.Run("deterministic", func(t *testing.T) {
		s2, dir2 := generate(t, 21)
		if err := Update(s2, dir2, 99); err != nil {
			t.Fatal(err)
		}
		for _, f := range []string{"pelmarra_r2.csv.gz", "vossbeck_r2.csv", CampaignFile, TruthFile} {
			a, _ := os.ReadFile(filepath.Join(dir, f))
			b, _ := os.ReadFile(filepath.Join(dir2, f))
			if len(a) == 0 || !bytes.Equal(a, b) {
				t.Errorf("%s differs between identical updates", f)
			}
		}
		if strings.Join(s.Changed, ",") != strings.Join(s2.Changed, ",") {
			t.Errorf("Changed differs")
		}
	})
}

func TestUpdateNeedsGenerate(t *testing.T) {
	if err := Update(&Scenario{}, t.TempDir(), 1); err == nil {
		t.Fatal("update of an empty scenario succeeded")
	}
}
