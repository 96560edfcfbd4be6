package main

import (
	"context"
	"encoding/csv"
	"fmt"
	"io"
	"strconv"

	"starvet/catalog"
	"starvet/db"
	"starvet/internal/numfmt"
	"starvet/vetting"
)

var listColumns = []string{"star_id", "status", "quality", "computed_in_run", "input_hash", "distance_method",
	"has_rv", "speed_p16_kms", "speed_p50_kms", "speed_p84_kms", "speed_lower_p50_kms", "r_gc_kpc", "v_esc_kms",
	"p_unbound", "p_unbound_lower", "origin", "p_gc_origin", "gc_consistency", "flight_time_myr", "model_name"}

func listRecord(v db.VerdictRow) []string {
	return []string{v.StarID, v.Status, v.Quality, strconv.FormatInt(v.ComputedInRun, 10), v.InputHash,
		v.DistanceMethod, map[bool]string{true: "1", false: "0"}[v.HasRV], numfmt.CSV(v.SpeedP16Kms), numfmt.CSV(v.SpeedP50Kms),
		numfmt.CSV(v.SpeedP84Kms), numfmt.CSV(v.SpeedLowerP50Kms), numfmt.CSV(v.RGCKpc), numfmt.CSV(v.VEscKms), numfmt.CSV(v.PUnbound),
		numfmt.CSV(v.PUnboundLower), v.Origin, numfmt.CSV(v.PGCOrigin), numfmt.CSV(v.GCConsistency), numfmt.CSV(v.FlightTimeMyr), v.ModelName}
}

func runList(ctx context.Context, env *Env, args []string) error {
	var af auditFlags
	fs := newFlags(env, "list", "[--ledger PATH] [--status S] [--run N] [--limit N] [--csv | --json | -o FILE]",
		"List the stars of a run (default: the latest complete run) with their status,\n"+
			"ordered by star id. Text shows a summary table; --csv and --json give every\n"+
			"verdict column (missing values empty in CSV, null in JSON). -o FILE writes every\n"+
			"verdict column with units to FILE, in the format its ending names (.csv, .ecsv,\n"+
			".fits, .vot; .gz after csv, ecsv or fits compresses).")
	af.register(fs)
	status := fs.String("status", "", "only stars with this status")
	run := fs.Int64("run", 0, "run id (0 = latest complete run)")
	limit := fs.Int("limit", 0, "at most this many stars (0 = all)")
	asCSV := fs.Bool("csv", false, "write CSV with a header line")
	out := fs.String("o", "", "write the verdicts with units to this file (.csv, .ecsv, .fits, .vot)")
	pos, err := parseArgs(env, fs, args)
	if err != nil {
		return err
	}
	switch {
	case len(pos) > 0:
		return usageError("list takes no arguments, got %q", pos)
	case *run < 0:
		return usageError("--run %d: want a positive run id or 0", *run)
	case *limit < 0:
		return usageError("--limit %d: want 0 or more", *limit)
	case *asCSV && af.json:
		return usageError("--csv and --json exclude each other")
	case *out != "" && (*asCSV || af.json):
		return usageError("-o excludes --csv and --json")
	}
	if *out != "" {
		if _, err := catalog.OutFormat(*out); err != nil {
			return usageError("list: -o: %v", err)
		}
	}
	l, err := openLedgerRO(ctx, af.ledger)
	if err != nil {
		return err
	}
	defer l.Close()
	f := db.ListFilter{Status: *status, Run: *run, Limit: *limit}
	switch {
	case *out != "":
		return writeListFile(ctx, env, l, f, *out)
	case *asCSV:
		return writeListCSV(ctx, env.Stdout, l, f)
	case af.json:
		return writeListJSON(ctx, env.Stdout, l, f)
	default:
		return writeListText(ctx, env.Stdout, l, f)
	}
}

func writeListCSV(ctx context.Context, w io.Writer, l *db.Ledger, f db.ListFilter) error {
	cw := csv.NewWriter(w)
	cw.Write(append([]string{"run_id"}, listColumns...))
	_, err := l.ListRun(ctx, f, func(v db.VerdictRow) error {
		return cw.Write(append([]string{strconv.FormatInt(v.RunID, 10)}, listRecord(v)...))
	})
	cw.Flush()
	if err != nil {
		return err
	}
	return cw.Error()
}

func writeListFile(ctx context.Context, env *Env, l *db.Ledger, f db.ListFilter, path string) error {
	vt := vetting.NewVerdictTable("verdicts")
	runID, err := l.ListRun(ctx, f, func(v db.VerdictRow) error {
		vt.Add(v)
		return nil
	})
	if err != nil {
		return err
	}
	if err := vetting.WriteOut(path, &vt.Table); err != nil {
		return err
	}
	fmt.Fprintf(env.Stderr, "wrote %d stars of run %d to %s\n", vt.Table.Len(), runID, path)
	return nil
}

func writeListJSON(ctx context.Context, w io.Writer, l *db.Ledger, f db.ListFilter) error {
	n := 0
	fmt.Fprint(w, "[")
	_, err := l.ListRun(ctx, f, func(v db.VerdictRow) error {
		if n > 0 {
			fmt.Fprint(w, ",")
		}
		n++
		fmt.Fprint(w, "\n")
		return writeJSONLine(w, verdictJSON(v))
	})
	fmt.Fprint(w, "\n]\n")
	return err
}

func writeListText(ctx context.Context, w io.Writer, l *db.Ledger, f db.ListFilter) error {
	n := 0
	runID, err := l.ListRun(ctx, f, func(v db.VerdictRow) error {
		if n == 0 {
			fmt.Fprintf(w, "%-24s %-10s %-7s %-9s %12s %9s\n", "star_id", "status", "quality", "computed", "speed_p50", "p_unbound")
		}
		n++
		q := orDash(v.Quality)
		comp := strconv.FormatInt(v.ComputedInRun, 10)
		if v.Carried() {
			comp += "*"
		}
		_, err := fmt.Fprintf(w, "%-24s %-10s %-7s %-9s %12s %9s\n", v.StarID, v.Status, q, comp, numfmt.Kms(v.SpeedP50Kms), numfmt.Prob(v.PUnbound))
		return err
	})
	if err != nil {
		return err
	}
	what := "stars"
	if f.Status != "" {
		what = fmt.Sprintf("stars with status %q", f.Status)
	}
	fmt.Fprintf(w, "%d %s in run %d", n, what, runID)
	if n > 0 {
		fmt.Fprint(w, " (* = carried forward from that run)")
	}
	fmt.Fprintln(w)
	return nil
}
