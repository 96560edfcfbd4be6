package main

import (
	"context"
	"fmt"
	"io"
	"math"
	"starvet/verdict"

	"starvet/campaign"
	"starvet/db"
	"starvet/internal/numfmt"
	"starvet/vetting"
)

func runWhy(ctx context.Context, env *Env, args []string) error {
	var af auditFlags
	fs := newFlags(env, "why", "[--ledger PATH] [--json] STAR_ID",
		"Explain one star: its current status (in the latest complete run), its status in\n"+
			"every run (marking verdicts carried forward from an earlier run), the reasons\n"+
			"with value against threshold, the kinematic summary, its matches, the\n"+
			"thresholds and model in force when it was computed (as that run recorded them),\n"+
			"and which inputs changed between the runs that computed it. Put \"--\" before an\n"+
			"id that starts with '-'.")
	af.register(fs)
	pos, err := parseArgs(env, fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usageError("why takes one STAR_ID, got %d arguments", len(pos))
	}
	l, err := openLedgerRO(ctx, af.ledger)
	if err != nil {
		return err
	}
	defer l.Close()
	h, err := l.Why(ctx, pos[0])
	if err != nil {
		return err
	}
	settings := map[int64]*db.RunSettings{}
	for i := range h.Computations {
		c := &h.Computations[i]
		if settings[c.RunID] == nil {
			if settings[c.RunID], err = l.RunSettings(ctx, c.RunID); err != nil {
				return err
			}
		}
		if th, ok := vetting.RecordedThresholds(settings[c.RunID]); ok {
			c.Reasons = append(c.Reasons, vetting.KinematicReasons(&c.Verdict, th)...)
		}
	}
	weighed, infIDs, err := l.StarInferences(ctx, pos[0])
	if err != nil {
		return err
	}
	if af.json {
		hj := historyJSON(h, settings)
		if len(weighed) == 0 {
			return writeJSON(env.Stdout, hj)
		}
		type use struct {
			Inference int64  `json:"inference"`
			Method    string `json:"method"`
			Used      bool   `json:"used"`
			Reason    string `json:"reason"`
		}
		uses := make([]use, len(weighed))
		for k, w := range weighed {
			uses[k] = use{infIDs[k], w.Method, w.Used, w.Reason}
		}
		return writeJSON(env.Stdout, struct {
			History any   `json:"history"`
			Weighed []use `json:"weighed"`
		}{hj, uses})
	}
	writeHistory(env.Stdout, h, settings)
	if len(weighed) > 0 {
		fmt.Fprintln(env.Stdout, "weighing the Galaxy (starvet weigh):")
		for k, w := range weighed {
			state := "not used"
			if w.Used {
				state = "used"
			}
			fmt.Fprintf(env.Stdout, "  inference %d, %s: %s: %s\n", infIDs[k], w.Method, state, w.Reason)
		}
	}
	return nil
}

// settingsText states the thresholds and model a computation was decided
// with, as its run recorded them.
func settingsText(runID int64, s *db.RunSettings) string {
	if !s.Recorded() {
		return fmt.Sprintf("settings of run %d: not recorded in the ledger (the run predates recorded settings)", runID)
	}
	get := func(name string) string {
		if v, ok := s.Get(name); ok {
			return v
		}
		return "(not recorded)"
	}
	esc := "infinity"
	if r, ok := s.Float(campaign.SettingEscapeRadiusKpc); !ok {
		esc = "(not recorded)"
	} else if r > 0 {
		esc = "r = " + get(campaign.SettingEscapeRadiusKpc) + " kpc"
	}
	return fmt.Sprintf("settings of run %d: unbound at p_unbound >= %s, marginal at >= %s; potential %s, escape to %s; Sun at %s kpc from the centre",
		runID, get(campaign.SettingUnboundP), get(campaign.SettingMarginalP), get(campaign.SettingPotentialModel), esc, get(campaign.SettingSunDistanceKpc))
}

func writeHistory(w io.Writer, h *db.StarHistory, settings map[int64]*db.RunSettings) {
	writeStatusByRun(w, h)
	for i := range h.Computations {
		c := &h.Computations[i]
		fmt.Fprintf(w, "\ncomputed in run %d: %s\n", c.RunID, c.Verdict.Status)
		fmt.Fprintf(w, "  %s\n", settingsText(c.RunID, settings[c.RunID]))
		writeInputChanges(w, c)
		writeReasons(w, c)
		writeKinematics(w, c.Verdict)
		writeMatches(w, c)
	}
	if hasCandidate(h) {
		fmt.Fprintf(w, "\n%s\n", candidateCaution)
	}
}

func writeStatusByRun(w io.Writer, h *db.StarHistory) {
	switch {
	case h.CurrentRun == 0:
		fmt.Fprintf(w, "star %s: no complete run yet\n", h.StarID)
	case h.CurrentStatus == "":
		fmt.Fprintf(w, "star %s: not in the latest complete run (%d)\n", h.StarID, h.CurrentRun)
	default:
		fmt.Fprintf(w, "star %s: %s (latest complete run %d)\n", h.StarID, h.CurrentStatus, h.CurrentRun)
	}
	fmt.Fprintf(w, "first written in run %d, last in run %d\n\nstatus by run:\n", h.FirstRun, h.LastRun)
	for _, r := range h.Runs {
		v := r.Verdict
		how := "computed in this run"
		if v.Carried() {
			how = fmt.Sprintf("carried forward from run %d", v.ComputedInRun)
		}
		q := orDash(v.Quality)
		fmt.Fprintf(w, "  run %-4d %-22s %-10s quality %-7s %s\n", v.RunID, "("+r.RunState+")", v.Status, q, how)
	}
}

func writeInputChanges(w io.Writer, c *db.Computation) {
	if c.Inputs != nil {
		fmt.Fprintf(w, "  input hash %s, dup_count %d\n", c.Inputs.InputHash, c.Inputs.DupCount)
	}
	if len(c.Changes) == 0 && c.DupCountChange == nil {
		return
	}
	fmt.Fprintf(w, "  inputs changed since the previous computation:\n")
	for _, ch := range c.Changes {
		fmt.Fprintf(w, "    %-22s %s -> %s %s\n", ch.Name, changed(ch.Old, ch.New), changed(ch.New, ch.Old), ch.Unit)
	}
	if d := c.DupCountChange; d != nil {
		fmt.Fprintf(w, "    %-22s %d -> %d\n", "duplicate rows", d[0], d[1])
	}
}

func writeReasons(w io.Writer, c *db.Computation) {
	if len(c.Reasons) == 0 {
		return
	}
	fmt.Fprintf(w, "  reasons:\n")
	for _, r := range c.Reasons {
		fmt.Fprintf(w, "    %-8s %-24s value %-10s threshold %-12s", r.Outcome, r.RuleID, numfmt.Value(r.Value), orDash(r.Threshold))
		if r.Severity != "" {
			fmt.Fprintf(w, " [%s]", r.Severity)
		}
		if r.Message != "" {
			fmt.Fprintf(w, " %s", r.Message)
		}
		fmt.Fprintln(w)
	}
}

func writeKinematics(w io.Writer, v db.VerdictRow) {
	if !hasKinematics(v) {
		return
	}
	fmt.Fprintf(w, "  kinematics (%s):\n", orDash(v.ModelName))
	fmt.Fprintf(w, "    distance from %s, radial velocity %s\n", orDash(v.DistanceMethod), map[bool]string{true: "measured", false: "not measured"}[v.HasRV])
	fmt.Fprintf(w, "    speed p16/p50/p84   %s / %s / %s km/s (lower bound p50 %s km/s)\n",
		numfmt.Kms(v.SpeedP16Kms), numfmt.Kms(v.SpeedP50Kms), numfmt.Kms(v.SpeedP84Kms), numfmt.Kms(v.SpeedLowerP50Kms))
	fmt.Fprintf(w, "    r_gc %s kpc, escape speed %s km/s, p_unbound %s (lower bound %s)\n",
		numfmt.Kpc(v.RGCKpc), numfmt.Kms(v.VEscKms), numfmt.Prob(v.PUnbound), numfmt.Prob(v.PUnboundLower))
	if v.Origin != "" || !math.IsNaN(v.PGCOrigin) || !math.IsNaN(v.FlightTimeMyr) {
		fmt.Fprintf(w, "    origin %s, p_gc_origin %s, gc_consistency %s, flight time %s Myr\n",
			orDash(v.Origin), numfmt.Prob(v.PGCOrigin), numfmt.Prob(v.GCConsistency), numfmt.Myr(v.FlightTimeMyr))
	}
}

func writeMatches(w io.Writer, c *db.Computation) {
	if len(c.Matches) == 0 {
		return
	}
	fmt.Fprintf(w, "  matches:\n")
	for _, m := range c.Matches {
		amb := ""
		if m.Ambiguous {
			amb = " ambiguous"
		}
		fmt.Fprintf(w, "    %-16s counterpart %-16s sep %s arcsec, p %s, %d candidates%s\n",
			m.Catalog, orDash(m.CounterpartID), numfmt.Sep(m.SepArcsec), numfmt.Prob(m.MatchProb), m.Candidates, amb)
	}
}

// candidateCaution is said wherever why shows an unbound or marginal verdict.
const candidateCaution = "An unbound or marginal verdict depends on the adopted Galactic potential and Solar\nparameters (shown per run above); it marks a candidate for follow-up, not a discovery."

func hasCandidate(h *db.StarHistory) bool {
	for _, r := range h.Runs {
		if st := verdict.Status(r.Verdict.Status); st == verdict.Unbound || st == verdict.Marginal {
			return true
		}
	}
	return false
}

func hasKinematics(v db.VerdictRow) bool {
	for _, x := range []float64{v.SpeedP50Kms, v.RGCKpc, v.VEscKms, v.PUnbound} {
		if !math.IsNaN(x) {
			return true
		}
	}
	return false
}

// changed is one side of an input change, printed against the other side
// so that a change never reads as two equal numbers.
func changed(x, other float64) string {
	if math.IsNaN(x) {
		return "(missing)"
	}
	return string(numfmt.AppendAgainst(nil, x, other))
}

func orDash(s string) string {
	if s == "" {
		return numfmt.Missing
	}
	return s
}

// JSON views: NaN becomes null, names follow the ledger columns.

func verdictJSON(v db.VerdictRow) map[string]any {
	return map[string]any{
		"run_id": v.RunID, "star_id": v.StarID, "status": v.Status, "quality": v.Quality,
		"computed_in_run": v.ComputedInRun, "carried": v.Carried(), "input_hash": v.InputHash,
		"distance_method": v.DistanceMethod, "has_rv": v.HasRV,
		"speed_p16_kms": jf(v.SpeedP16Kms), "speed_p50_kms": jf(v.SpeedP50Kms), "speed_p84_kms": jf(v.SpeedP84Kms),
		"speed_lower_p50_kms": jf(v.SpeedLowerP50Kms), "r_gc_kpc": jf(v.RGCKpc), "v_esc_kms": jf(v.VEscKms),
		"p_unbound": jf(v.PUnbound), "p_unbound_lower": jf(v.PUnboundLower), "origin": v.Origin,
		"p_gc_origin": jf(v.PGCOrigin), "gc_consistency": jf(v.GCConsistency), "flight_time_myr": jf(v.FlightTimeMyr),
		"model_name": v.ModelName,
	}
}

func historyJSON(h *db.StarHistory, settings map[int64]*db.RunSettings) map[string]any {
	runs := make([]map[string]any, len(h.Runs))
	for i, r := range h.Runs {
		m := verdictJSON(r.Verdict)
		m["run_state"] = r.RunState
		runs[i] = m
	}
	comps := make([]map[string]any, len(h.Computations))
	for i, c := range h.Computations {
		m := map[string]any{"run_id": c.RunID, "verdict": verdictJSON(c.Verdict), "settings": settingsJSON(settings[c.RunID])}
		if c.Inputs != nil {
			in := map[string]any{}
			for j, x := range c.Inputs.Values {
				in[db.InputName(j)] = jf(x)
			}
			m["input_hash"] = c.Inputs.InputHash
			m["dup_count"] = c.Inputs.DupCount
			m["inputs"] = in
		}
		changes := []map[string]any{}
		for _, ch := range c.Changes {
			changes = append(changes, map[string]any{"name": ch.Name, "unit": ch.Unit, "old": jf(ch.Old), "new": jf(ch.New)})
		}
		if d := c.DupCountChange; d != nil {
			changes = append(changes, map[string]any{"name": "dup_count", "old": d[0], "new": d[1]})
		}
		m["changes"] = changes
		reasons := []map[string]any{}
		for _, r := range c.Reasons {
			reasons = append(reasons, map[string]any{"rule_id": r.RuleID, "outcome": r.Outcome, "severity": r.Severity,
				"value": jf(r.Value), "threshold": r.Threshold, "message": r.Message})
		}
		m["reasons"] = reasons
		matches := []map[string]any{}
		for _, x := range c.Matches {
			matches = append(matches, map[string]any{"catalog": x.Catalog, "counterpart_id": x.CounterpartID,
				"sep_arcsec": jf(x.SepArcsec), "match_prob": jf(x.MatchProb), "candidates": x.Candidates, "ambiguous": x.Ambiguous})
		}
		m["matches"] = matches
		comps[i] = m
	}
	return map[string]any{
		"star_id": h.StarID, "current_status": h.CurrentStatus, "current_run": h.CurrentRun,
		"first_run": h.FirstRun, "last_run": h.LastRun, "runs": runs, "computations": comps,
	}
}
