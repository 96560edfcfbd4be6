package main

import (
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"sort"
	"strconv"
	"strings"
	"time"

	"starvet/db"
	"starvet/internal/numfmt"
)

// This file holds runRuns and the helpers the audit commands (why, diff,
// list, runs) share: they open the ledger read-only and never take the
// writer lock, so they work while a run is writing.

const defaultLedger = "starvet.db"

type auditFlags struct {
	ledger string
	json   bool
}

func (a *auditFlags) register(fs *flag.FlagSet) {
	fs.StringVar(&a.ledger, "ledger", defaultLedger, "ledger file")
	fs.BoolVar(&a.json, "json", false, "write JSON instead of text")
}

func openLedgerRO(ctx context.Context, path string) (*db.Ledger, error) {
	if _, err := os.Stat(path); errors.Is(err, os.ErrNotExist) {
		return nil, fmt.Errorf("ledger %s does not exist (give its path with --ledger)", path)
	}
	return db.Open(ctx, path, db.Options{ReadOnly: true})
}

func parseRunID(s string) (int64, error) {
	id, err := strconv.ParseInt(s, 10, 64)
	if err != nil || id <= 0 {
		return 0, usageError("run id %q: want a positive integer", s)
	}
	return id, nil
}

func writeJSON(w io.Writer, v any) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(v)
}

// jf turns NaN (missing) into JSON null.
func jf(x float64) *float64 {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return nil
	}
	return &x
}

func stamp(t time.Time) string {
	if t.IsZero() {
		return numfmt.Missing
	}
	return t.UTC().Format(time.RFC3339)
}

func countsText(m map[string]int64) string {
	if len(m) == 0 {
		return numfmt.Missing
	}
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	parts := make([]string, len(keys))
	for i, k := range keys {
		parts[i] = fmt.Sprintf("%s=%d", k, m[k])
	}
	return strings.Join(parts, " ")
}

type runJSON struct {
	ID              int64            `json:"id"`
	State           string           `json:"state"`
	Interrupted     bool             `json:"interrupted,omitempty"`
	StartedAt       string           `json:"started_at"`
	FinishedAt      string           `json:"finished_at,omitempty"`
	DurationSec     *float64         `json:"duration_s,omitempty"`
	ToolVersion     string           `json:"tool_version"`
	CampaignHash    string           `json:"campaign_hash,omitempty"`
	RulesetHash     string           `json:"ruleset_hash,omitempty"`
	ConfigHash      string           `json:"config_hash,omitempty"`
	MatchHash       string           `json:"match_hash,omitempty"`
	ModelHash       string           `json:"model_hash,omitempty"`
	Seed            int64            `json:"seed"`
	Full            bool             `json:"full"`
	StarsTotal      int64            `json:"stars_total"`
	StarsComputed   int64            `json:"stars_computed"`
	StarsCarried    int64            `json:"stars_carried"`
	RowsQuarantined int64            `json:"rows_quarantined"`
	Counts          map[string]int64 `json:"counts"`
	Note            string           `json:"note,omitempty"`
	// Settings and RuleText are what the run recorded; null for a run
	// that predates recorded settings.
	Settings map[string]string `json:"settings"`
	RuleText *string           `json:"rule_text"`
}

// settingsJSON is a run's recorded settings, name -> value; nil (null)
// when it recorded none.
func settingsJSON(s *db.RunSettings) map[string]string {
	if !s.Recorded() {
		return nil
	}
	return s.Map()
}

func toRunJSON(r db.Run) runJSON {
	j := runJSON{ID: r.ID, State: r.State, Interrupted: r.Interrupted, StartedAt: stamp(r.StartedAt),
		ToolVersion: r.ToolVersion, CampaignHash: r.CampaignHash, RulesetHash: r.RulesetHash,
		ConfigHash: r.ConfigHash, MatchHash: r.MatchHash, ModelHash: r.ModelHash, Seed: r.Seed, Full: r.Full,
		StarsTotal: r.StarsTotal, StarsComputed: r.StarsComputed, StarsCarried: r.StarsCarried,
		RowsQuarantined: r.RowsQuarantined, Counts: r.Counts, Note: r.Note}
	if !r.FinishedAt.IsZero() {
		j.FinishedAt = stamp(r.FinishedAt)
		d := r.FinishedAt.Sub(r.StartedAt).Seconds()
		j.DurationSec = &d
	}
	return j
}

func duration(r db.Run) string {
	if r.FinishedAt.IsZero() {
		if r.State == "running" {
			return "running"
		}
		return numfmt.Missing
	}
	return r.FinishedAt.Sub(r.StartedAt).Round(time.Second).String()
}

func runRuns(ctx context.Context, env *Env, args []string) error {
	var af auditFlags
	fs := newFlags(env, "runs", "[--ledger PATH] [--json]",
		"List every run in the ledger, oldest first: id, state, start, duration, stars,\n"+
			"computed/carried and the status counts. A run whose writer died shows as\n"+
			"'failed (interrupted)'.")
	af.register(fs)
	pos, err := parseArgs(env, fs, args)
	if err != nil {
		return err
	}
	if len(pos) > 0 {
		return usageError("runs takes no arguments, got %q", pos)
	}
	l, err := openLedgerRO(ctx, af.ledger)
	if err != nil {
		return err
	}
	defer l.Close()
	runs, err := l.Runs(ctx)
	if err != nil {
		return err
	}
	if err := countUnfinished(ctx, l, runs); err != nil {
		return err
	}
	if af.json {
		out, err := runsJSON(ctx, l, runs)
		if err != nil {
			return err
		}
		return writeJSON(env.Stdout, out)
	}
	writeRuns(env.Stdout, af.ledger, runs)
	return nil
}

// countUnfinished fills in the counts of a running or failed run, which
// has no summary, from what it wrote so far.
func countUnfinished(ctx context.Context, l *db.Ledger, runs []db.Run) error {
	for i := range runs {
		if runs[i].Counts != nil {
			continue
		}
		c, err := l.StatusCounts(ctx, runs[i].ID)
		if err != nil {
			return err
		}
		runs[i].Counts = c
		for _, n := range c {
			runs[i].StarsTotal += n
		}
	}
	return nil
}

func runsJSON(ctx context.Context, l *db.Ledger, runs []db.Run) ([]runJSON, error) {
	out := make([]runJSON, len(runs))
	for i, r := range runs {
		out[i] = toRunJSON(r)
		s, err := l.RunSettings(ctx, r.ID)
		if err != nil {
			return nil, err
		}
		if out[i].Settings = settingsJSON(s); out[i].Settings != nil {
			out[i].RuleText = &s.RuleText
		}
	}
	return out, nil
}

func writeRuns(w io.Writer, ledger string, runs []db.Run) {
	if len(runs) == 0 {
		fmt.Fprintf(w, "ledger %s has no runs\n", ledger)
		return
	}
	fmt.Fprintf(w, "%-5s %-20s %-20s %-9s %9s %19s  %s\n", "run", "state", "started", "duration", "stars", "computed/carried", "counts")
	for _, r := range runs {
		fmt.Fprintf(w, "%-5d %-20s %-20s %-9s %9d %19s  %s\n", r.ID, r.StateText(), stamp(r.StartedAt),
			duration(r), r.StarsTotal, fmt.Sprintf("%d/%d", r.StarsComputed, r.StarsCarried), countsText(r.Counts))
		if r.State == "failed" && r.Note != "" {
			fmt.Fprintf(w, "      note: %s\n", r.Note)
		}
	}
}

// writeJSONLine writes v compactly without a trailing newline.
func writeJSONLine(w io.Writer, v any) error {
	b, err := json.Marshal(v)
	if err != nil {
		return err
	}
	_, err = w.Write(b)
	return err
}
