package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"errors"
	"math"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"starvet/campaign"
	"starvet/db"
)

// auditLedger writes two complete runs: in run 2 the first star is
// recomputed with a measured rv and flips to accepted, the second is
// carried forward, the third is new.
func auditLedger(t *testing.T) string {
	t.Helper()
	ctx := context.Background()
	p := filepath.Join(t.TempDir(), "audit.db")
	l, err := db.Open(ctx, p, db.Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	star := func(id string, rv float64, status string) db.StarRecord {
		in := &db.InputRow{InputHash: id + "-" + status, DupCount: 1}
		for i := range in.Values {
			in.Values[i] = float64(i) + 0.5
		}
		in.Values[14] = rv // rv
		nan := math.NaN()
		return db.StarRecord{StarID: id, Inputs: in,
			Matches: []db.MatchRow{{Catalog: "spec-beta", CounterpartID: "b-" + id, SepArcsec: 0.21, MatchProb: 0.9, Candidates: 2}},
			Verdict: db.VerdictRow{Status: status, Quality: "pass", SpeedP16Kms: 410, SpeedP50Kms: 520, SpeedP84Kms: 640,
				SpeedLowerP50Kms: nan, RGCKpc: 11.5, VEscKms: 540, PUnbound: 0.42, PUnboundLower: nan, PGCOrigin: nan,
				GCConsistency: nan, FlightTimeMyr: nan, ModelName: "invented-potential"},
			Reasons: []db.ReasonRow{{RuleID: "plx-snr", Outcome: "fail", Severity: "reject", Value: 2.5, Threshold: ">= 5", Message: "parallax too uncertain"}},
		}
	}
	// A star a run does not write keeps its verdict of the run before.
	write := func(recs []db.StarRecord) int64 {
		w, err := l.BeginRun(ctx, db.RunInfo{Settings: testSettings, ToolVersion: "test", Seed: 1})
		if err != nil {
			t.Fatal(err)
		}
		if err := w.AddStars(ctx, recs); err != nil {
			t.Fatal(err)
		}
		if err := w.Finish(ctx, db.RunSummary{}); err != nil {
			t.Fatal(err)
		}
		return w.ID()
	}
	defer func() {
		// A third run that fails after one batch: runs must show what it wrote.
		w, err := l.BeginRun(ctx, db.RunInfo{Settings: testSettings, ToolVersion: "test"})
		if err != nil {
			t.Fatal(err)
		}
		if err := w.AddStars(ctx, []db.StarRecord{star("HV-009", 1, "rejected")}); err != nil {
			t.Fatal(err)
		}
		if err := w.Fail(ctx, errors.New("disk full (invented)")); err != nil {
			t.Fatal(err)
		}
	}()
	hostile := "'); DROP TABLE runs; --"
	write([]db.StarRecord{star("Ωμέγα-星-7", math.NaN(), "rejected"), star("HV-002", math.NaN(), "accepted"), star(hostile, 1, "rejected")})
	write([]db.StarRecord{star("Ωμέγα-星-7", 705.25, "accepted"), star("HV-003", 1, "rejected"), star(hostile, 1, "accepted")})
	return p
}

func runCLI(t *testing.T, args ...string) (stdout, stderr string, code int) {
	t.Helper()
	var o, e bytes.Buffer
	err := Run(context.Background(), args, &o, &e)
	if err != nil {
		e.WriteString(err.Error())
	}
	t.Logf("starvet %q:\n%s%s", args, o.String(), e.String())
	return o.String(), e.String(), exitCode(err)
}

func TestAuditCommands(t *testing.T) {
	p := auditLedger(t)
	tests := []struct {
		name     string
		args     []string
		code     int
		contains []string
		absent   []string
	}{
		{"why text", []string{"why", "--ledger", p, "Ωμέγα-星-7"}, 0, []string{
			"star Ωμέγα-星-7: accepted (latest complete run 2)",
			"run 1", "rejected", "run 2", "accepted",
			"rv", "(missing) -> 705.25 km/s",
			"fail     plx-snr", "value 2.5", "threshold >= 5", "[reject]",
			"speed p16/p50/p84   410 / 520 / 640 km/s (lower bound p50 - km/s)",
			"r_gc 11.5 kpc, escape speed 540 km/s, p_unbound 0.42 (lower bound -)",
			"sep 0.21 arcsec, p 0.9, 2 candidates",
			"spec-beta", "b-Ωμέγα-星-7",
			"settings of run 2: unbound at p_unbound >= 0.8, marginal at >= 0.5; potential invented-potential, escape to r = 187.5 kpc; Sun at 8.3 kpc from the centre",
		}, nil},
		{"why flags after id", []string{"why", "HV-002", "--ledger", p}, 0, []string{
			"star HV-002: accepted", "carried forward from run 1",
		}, []string{"computed in run 2"}},
		{"why hostile id", []string{"why", "--ledger", p, "--", "'); DROP TABLE runs; --"}, 0, []string{
			"star '); DROP TABLE runs; --: accepted",
		}, nil},
		{"why unknown", []string{"why", "--ledger", p, "nobody"}, 1, []string{`no star "nobody"`}, nil},
		{"why no id", []string{"why", "--ledger", p}, 2, []string{"why takes one STAR_ID"}, nil},
		{"why missing ledger", []string{"why", "--ledger", p + ".nope", "x"}, 1, []string{"does not exist"}, nil},
		{"diff default", []string{"diff", "--ledger", p}, 0, []string{
			"run 1 -> run 2: 3 stars changed status, 1 unchanged",
			"rejected -> accepted 2", "(none) -> rejected   1",
			"'); DROP TABLE runs; --: rejected -> accepted",
			"HV-003: (none) -> rejected",
		}, []string{"HV-002"}},
		{"diff limit", []string{"diff", "--ledger", p, "--limit", "1", "1", "2"}, 0, []string{"... 2 more"}, nil},
		{"diff bad run", []string{"diff", "--ledger", p, "x"}, 2, []string{`run id "x"`}, nil},
		{"diff unknown run", []string{"diff", "--ledger", p, "1", "9"}, 1, []string{"no run 9"}, nil},
		{"diff too many", []string{"diff", "--ledger", p, "1", "2", "3"}, 2, []string{"at most two"}, nil},
		{"list", []string{"list", "--ledger", p}, 0, []string{"HV-002", "1*", "HV-003", "Ωμέγα-星-7", "4 stars in run 2"}, nil},
		{"list status", []string{"list", "--ledger", p, "--status", "rejected"}, 0, []string{"HV-003", `1 stars with status "rejected" in run 2`}, []string{"HV-002"}},
		{"list run 1", []string{"list", "--ledger", p, "--run", "1", "--status", "accepted"}, 0, []string{"HV-002", "in run 1"}, []string{"Ωμέγα"}},
		{"list bad flag", []string{"list", "--ledger", p, "--run", "x"}, 2, []string{"invalid value"}, nil},
		{"list csv json", []string{"list", "--ledger", p, "--csv", "--json"}, 2, []string{"exclude each other"}, nil},
		{"runs", []string{"runs", "--ledger", p}, 0, []string{"complete", "accepted=1 rejected=2", "accepted=3 rejected=1", "3/1",
			"failed", "rejected=1", "note: disk full (invented)"}, nil},
		{"runs args", []string{"runs", "--ledger", p, "extra"}, 2, []string{"no arguments"}, nil},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			out, errOut, code := runCLI(t, tc.args...)
			if code != tc.code {
				t.Fatalf("exit %d, want %d\nstdout:\n%s\nstderr:\n%s", code, tc.code, out, errOut)
			}
			all := out + errOut
			for _, s := range tc.contains {
				if !strings.Contains(all, s) {
					t.Errorf("output lacks %q:\n%s", s, all)
				}
			}
			for _, s := range tc.absent {
				if strings.Contains(all, s) {
					t.Errorf("output has %q:\n%s", s, all)
				}
			}
		})
	}
}

func TestAuditJSONAndCSV(t *testing.T) {
	p := auditLedger(t)
	t.Run("why json", func(t *testing.T) {
		out, _, code := runCLI(t, "why", "--json", "--ledger", p, "Ωμέγα-星-7")
		if code != 0 {
			t.Fatalf("exit %d", code)
		}
		var h struct {
			CurrentStatus string `json:"current_status"`
			Runs          []struct {
				Status        string   `json:"status"`
				PUnboundLower *float64 `json:"p_unbound_lower"`
			} `json:"runs"`
			Computations []struct {
				Changes []struct {
					Name string   `json:"name"`
					Old  *float64 `json:"old"`
					New  *float64 `json:"new"`
				} `json:"changes"`
			} `json:"computations"`
		}
		if err := json.Unmarshal([]byte(out), &h); err != nil {
			t.Fatalf("%v\n%s", err, out)
		}
		if h.CurrentStatus != "accepted" || len(h.Runs) != 2 || h.Runs[0].PUnboundLower != nil {
			t.Errorf("parsed %+v", h)
		}
		c := h.Computations[1].Changes
		if len(c) != 1 || c[0].Name != "rv" || c[0].Old != nil || *c[0].New != 705.25 {
			t.Errorf("changes %+v", c)
		}
	})
	t.Run("runs json", func(t *testing.T) {
		out, _, code := runCLI(t, "runs", "--json", "--ledger", p)
		if code != 0 {
			t.Fatalf("exit %d", code)
		}
		var runs []struct {
			ID       int64             `json:"id"`
			Settings map[string]string `json:"settings"`
			RuleText *string           `json:"rule_text"`
		}
		if err := json.Unmarshal([]byte(out), &runs); err != nil {
			t.Fatalf("%v\n%s", err, out)
		}
		if len(runs) != 3 {
			t.Fatalf("%d runs, want 3:\n%s", len(runs), out)
		}
		for _, r := range runs {
			if !reflect.DeepEqual(r.Settings, testSettings.Map()) || r.RuleText == nil || *r.RuleText != testSettings.RuleText {
				t.Errorf("run %d settings %v, rule text %v; want what it recorded", r.ID, r.Settings, r.RuleText)
			}
		}
	})
	t.Run("diff json", func(t *testing.T) {
		out, _, code := runCLI(t, "diff", "--json", "--ledger", p)
		if code != 0 {
			t.Fatalf("exit %d", code)
		}
		var d struct {
			Changed     int64 `json:"changed"`
			Transitions []struct {
				From, To string
				Count    int64
			} `json:"transitions"`
		}
		if err := json.Unmarshal([]byte(out), &d); err != nil {
			t.Fatalf("%v\n%s", err, out)
		}
		if d.Changed != 3 || len(d.Transitions) != 2 || d.Transitions[0].Count != 2 {
			t.Errorf("parsed %+v", d)
		}
	})
	t.Run("list csv", func(t *testing.T) {
		out, _, code := runCLI(t, "list", "--csv", "--ledger", p)
		if code != 0 {
			t.Fatalf("exit %d", code)
		}
		recs, err := csv.NewReader(strings.NewReader(out)).ReadAll()
		if err != nil {
			t.Fatal(err)
		}
		if len(recs) != 5 || recs[0][1] != "star_id" {
			t.Fatalf("csv %q", recs)
		}
		var hostile []string
		for _, r := range recs[1:] {
			if r[1] == "'); DROP TABLE runs; --" {
				hostile = r
			}
		}
		// run_id, star_id, status, quality, computed_in_run, ..., speed_lower_p50_kms (missing) at index 11
		if hostile == nil || hostile[2] != "accepted" || hostile[9] != "520" || hostile[11] != "" {
			t.Errorf("hostile row %q", hostile)
		}
	})
	t.Run("list json", func(t *testing.T) {
		out, _, code := runCLI(t, "list", "--json", "--ledger", p, "--status", "accepted")
		if code != 0 {
			t.Fatalf("exit %d", code)
		}
		var rows []map[string]any
		if err := json.Unmarshal([]byte(out), &rows); err != nil {
			t.Fatalf("%v\n%s", err, out)
		}
		if len(rows) != 3 || rows[0]["star_id"] != "'); DROP TABLE runs; --" {
			t.Errorf("rows %v", rows)
		}
	})
	t.Run("runs json", func(t *testing.T) {
		out, _, code := runCLI(t, "runs", "--json", "--ledger", p)
		if code != 0 {
			t.Fatalf("exit %d", code)
		}
		var runs []struct {
			ID           int64            `json:"id"`
			State        string           `json:"state"`
			StarsCarried int64            `json:"stars_carried"`
			Counts       map[string]int64 `json:"counts"`
		}
		if err := json.Unmarshal([]byte(out), &runs); err != nil {
			t.Fatalf("%v\n%s", err, out)
		}
		if len(runs) != 3 || runs[2].State != "failed" || runs[1].State != "complete" || runs[1].StarsCarried != 1 || runs[1].Counts["accepted"] != 3 {
			t.Errorf("runs %+v", runs)
		}
	})
}

// testSettings is what the test runs record: BeginRun refuses a run
// without settings. Their values are invented.
var testSettings = db.RunSettings{Values: []db.Setting{{Name: "seed", Value: "1"}, {Name: campaign.SettingUnboundP, Value: "0.8"},
	{Name: campaign.SettingMarginalP, Value: "0.5"}, {Name: campaign.SettingPotentialModel, Value: "invented-potential"},
	{Name: campaign.SettingEscapeRadiusKpc, Value: "187.5"}, {Name: campaign.SettingGCRadiusKpc, Value: "0.75"}, {Name: campaign.SettingSunDistanceKpc, Value: "8.3"}},
	RuleText: "# invented rules\n"}

// why says the caution under an unbound verdict, and that a run from
// before recorded settings did not record them.
func TestWhyCautionAndUnrecorded(t *testing.T) {
	v := db.NewVerdictRow("unbound")
	v.RunID, v.ComputedInRun, v.StarID = 1, 1, "HV-9"
	h := &db.StarHistory{StarID: "HV-9", FirstRun: 1, LastRun: 1, CurrentRun: 1, CurrentStatus: "unbound",
		Runs: []db.StarRun{{Verdict: v, RunState: "complete"}}, Computations: []db.Computation{{RunID: 1, Verdict: v}}}
	var b bytes.Buffer
	writeHistory(&b, h, map[int64]*db.RunSettings{1: {}})
	for _, want := range []string{"settings of run 1: not recorded in the ledger", "not a discovery"} {
		if !strings.Contains(b.String(), want) {
			t.Errorf("why output lacks %q:\n%s", want, b.String())
		}
	}
}
