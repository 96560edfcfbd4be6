package main

import (
	"bytes"
	"context"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"starvet/db"
	"starvet/galaxy/potential"
)

// reportLedger writes one complete run: two unbound stars, one bound, one
// rejected.
func reportLedger(t *testing.T) string {
	t.Helper()
	ctx := context.Background()
	p := filepath.Join(t.TempDir(), "report.db")
	l, err := db.Open(ctx, p, db.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	nan := math.NaN()
	star := func(id, status string, p50, pUnb float64) db.StarRecord {
		in := &db.InputRow{InputHash: "h-" + id, DupCount: 1}
		for i := range in.Values {
			in.Values[i] = nan
		}
		in.Values[0], in.Values[1] = 150, -20 // ra, dec
		v := db.VerdictRow{Status: status, Quality: "pass", SpeedP16Kms: nan, SpeedP50Kms: nan, SpeedP84Kms: nan,
			SpeedLowerP50Kms: nan, RGCKpc: nan, VEscKms: nan, PUnbound: nan, PUnboundLower: nan, PGCOrigin: nan,
			GCConsistency: nan, FlightTimeMyr: nan}
		var rs []db.ReasonRow
		if status == "rejected" {
			v.Quality = "reject"
			rs = []db.ReasonRow{{RuleID: "plx-snr", Outcome: "fail", Value: 2, Message: "parallax over error 2 < 5"}}
		} else {
			v.HasRV, v.SpeedP16Kms, v.SpeedP50Kms, v.SpeedP84Kms = true, p50-40, p50, p50+50
			v.RGCKpc, v.VEscKms, v.PUnbound, v.ModelName, v.DistanceMethod = 20, 480, pUnb, potential.DefaultModel, "inverse"
		}
		return db.StarRecord{StarID: id, Inputs: in, Verdict: v, Reasons: rs}
	}
	w, err := l.BeginRun(ctx, db.RunInfo{Settings: testSettings, ToolVersion: "test", Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	recs := []db.StarRecord{star("KX-1", "unbound", 900, 0.98), star("KX-2", "unbound", 800, 0.995),
		star("KX-3", "bound", 300, 0), star("KX-4", "rejected", 0, 0)}
	if err := w.AddStars(ctx, recs); err != nil {
		t.Fatal(err)
	}
	if err := w.Finish(ctx, db.RunSummary{}); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestReportCommand(t *testing.T) {
	ledger := reportLedger(t)
	out := filepath.Join(t.TempDir(), "page")
	cases := []struct {
		name     string
		args     []string
		code     int
		stdout   string // substring of stdout
		stderr   string // substring of stderr or the error
		wantPage bool
	}{
		{"latest run", []string{"report", "--ledger", ledger, "-o", out}, 0, "report of run 1: " + filepath.Join(out, "index.html"), "", true},
		{"explicit run", []string{"report", "--run", "1", "--ledger", ledger, "-o", out}, 0, "report of run 1", "", true},
		{"help", []string{"report", "--help"}, 0, "Usage: starvet report", "", false},
		{"no -o", []string{"report", "--ledger", ledger}, 2, "", "report needs -o DIR", false},
		{"stray argument", []string{"report", "--ledger", ledger, "-o", out, "extra"}, 2, "", `report takes no arguments, got ["extra"]`, false},
		{"negative run", []string{"report", "--run", "-1", "--ledger", ledger, "-o", out}, 2, "", "--run -1", false},
		{"bad flag", []string{"report", "--frobnicate", "-o", out}, 2, "", "frobnicate", false},
		{"negative radius", []string{"report", "--gc-radius-kpc", "-1", "--ledger", ledger, "-o", out}, 2, "", "--gc-radius-kpc -1", false},
		{"campaign and radius", []string{"report", "--campaign", "c.toml", "--gc-radius-kpc", "2", "--ledger", ledger, "-o", out}, 2, "", "--campaign excludes", false},
		{"missing campaign", []string{"report", "--campaign", filepath.Join(t.TempDir(), "none.toml"), "--ledger", ledger, "-o", out}, 1, "", "none.toml", false},
		{"override on a recorded run", []string{"report", "--escape-radius-kpc", "200", "--ledger", ledger, "-o", out}, 1, "", "run 1 recorded its settings in the ledger", false},
		{"unknown run", []string{"report", "--run", "7", "--ledger", ledger, "-o", out}, 1, "", "no run 7", false},
		{"missing ledger", []string{"report", "--ledger", filepath.Join(t.TempDir(), "none.db"), "-o", out}, 1, "", "does not exist", false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			os.RemoveAll(out)
			var o, e bytes.Buffer
			err := Run(context.Background(), c.args, &o, &e)
			if err != nil {
				e.WriteString(err.Error())
			}
			if got := exitCode(err); got != c.code {
				t.Fatalf("exit %d, want %d; stderr %s", got, c.code, e.String())
			}
			if !strings.Contains(o.String(), c.stdout) {
				t.Errorf("stdout %q lacks %q", o.String(), c.stdout)
			}
			if !strings.Contains(e.String(), c.stderr) {
				t.Errorf("stderr %q lacks %q", e.String(), c.stderr)
			}
			page, err := os.ReadFile(filepath.Join(out, "index.html"))
			if !c.wantPage {
				if err == nil {
					t.Error("index.html written")
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			s := string(page)
			if want := "escape to r = 187.5 kpc (recorded in the ledger for run 1)"; !strings.Contains(s, want) {
				t.Errorf("page lacks %q: the ledger's escape radius, without flags", want)
			}
			// KX-2 (p 0.995) before KX-1 (p 0.98).
			i2, i1 := strings.Index(s, "<td>KX-2</td>"), strings.Index(s, "<td>KX-1</td>")
			if i2 < 0 || i1 < 0 || i2 > i1 {
				t.Errorf("candidate rows missing or out of order (KX-2 at %d, KX-1 at %d)", i2, i1)
			}
			if strings.Contains(s, "<td>KX-3</td>") {
				t.Error("bound star KX-3 in the candidate table")
			}
			if !strings.Contains(s, "<td>plx-snr</td><td class=\"n\">1</td>") {
				t.Error("rejection reason plx-snr with 1 star missing")
			}
			for _, f := range []string{"speed.svg", "sky.svg", "p_unbound.svg", "crossings.svg"} {
				if _, err := os.Stat(filepath.Join(out, f)); err != nil {
					t.Errorf("plot %s: %v", f, err)
				}
			}
		})
	}
}
