package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"strings"
	"text/tabwriter"

	"starvet/catalog"
	"starvet/internal/numfmt"
	"starvet/internal/position"
	"starvet/rules"
)

const rulesAbout = `Show or check a rule set.

  starvet rules show [--catalogs NAME,...] [FILE]
      print the effective rule set (the built-in default when no FILE):
      each rule's id, severity, test, threshold, precondition and source,
      and the set's fingerprint.
  starvet rules check [--catalogs NAME,...] FILE
      validate FILE; print every problem as FILE:LINE:COL: rule "ID": message
      and exit 1 if there is any.

--catalogs declares the campaign's secondary catalog names (in campaign
order). Without it, any catalog name the file uses is accepted.`

func runRules(ctx context.Context, env *Env, args []string) error {
	if len(args) == 0 {
		fmt.Fprintf(env.Stderr, "Usage: starvet rules show|check ...\n\n%s\n", rulesAbout)
		return usageError("rules: want show or check")
	}
	switch args[0] {
	case "-h", "--help", "-help", "help":
		fmt.Fprintf(env.Stdout, "Usage: starvet rules show|check ...\n\n%s\n", rulesAbout)
		return nil
	case "show":
		return rulesShow(env, args[1:])
	case "check":
		return rulesCheck(env, args[1:])
	}
	return usageError("rules: unknown action %q (want show or check)", args[0])
}

func rulesFlags(env *Env, action, synopsis string) (*flag.FlagSet, *string) {
	fs := newFlags(env, "rules "+action, synopsis, rulesAbout)
	cats := fs.String("catalogs", "", "secondary catalog names, comma-separated, in campaign order")
	return fs, cats
}

func schemaFrom(cats string) (rules.Schema, error) {
	if cats == "" {
		return rules.Schema{AnyCatalog: true}, nil
	}
	var names []string
	for _, c := range strings.Split(cats, ",") {
		c = strings.TrimSpace(c)
		if c == "" {
			return rules.Schema{}, usageError("--catalogs %q: empty name", cats)
		}
		names = append(names, c)
	}
	return rules.Schema{Catalogs: names}, nil
}

// loadRules loads FILE (or the default) and prints load errors one a line.
func loadRules(env *Env, file, cats string) (*rules.RuleSet, error) {
	schema, err := schemaFrom(cats)
	if err != nil {
		return nil, err
	}
	var rs *rules.RuleSet
	if file == "" {
		rs, err = rules.Default(schema)
	} else {
		rs, err = rules.Load(file, schema)
	}
	var les position.Errors
	if errors.As(err, &les) {
		for _, e := range les {
			fmt.Fprintln(env.Stderr, e.Error())
		}
		fmt.Fprintf(env.Stderr, "%d problem(s) in %s\n", len(les), les[0].File)
		return nil, errSilent
	}
	if errors.Is(err, rules.ErrSchema) {
		return nil, usageError("--catalogs: %v", err)
	}
	return rs, err
}

func rulesShow(env *Env, args []string) error {
	fs, cats := rulesFlags(env, "show", "[--catalogs NAME,...] [FILE]")
	pos, err := parseArgs(env, fs, args)
	if err != nil {
		return err
	}
	if len(pos) > 1 {
		return usageError("rules show: at most one FILE, got %d arguments", len(pos))
	}
	file := ""
	if len(pos) == 1 {
		file = pos[0]
	}
	rs, err := loadRules(env, file, *cats)
	if err != nil {
		return err
	}
	w := env.Stdout
	fmt.Fprintf(w, "rule set:    %s, version %s (%s)\n", rs.Name, rs.Version, rs.File)
	fmt.Fprintf(w, "fingerprint: %s\n", rs.Fingerprint)
	catList := "none declared"
	if len(rs.Catalogs) > 0 {
		catList = strings.Join(rs.Catalogs, ", ")
	}
	fmt.Fprintf(w, "catalogs:    %s\n\n", catList)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "ID\tSEVERITY\tTEST\tTHRESHOLD\tWHEN\tVOIDS ON FAIL\tSOURCE\tRULE FINGERPRINT")
	for _, r := range rs.Rules {
		when := numfmt.Missing
		if r.When != nil {
			when = r.When.Source
		}
		src := r.Source
		if src == "" {
			src = "(none given)"
		}
		voids := numfmt.Missing
		if len(r.Voids) > 0 {
			names := make([]string, len(r.Voids))
			for i, f := range r.Voids {
				names[i] = catalog.Fields[f].Name
			}
			voids = strings.Join(names, ",")
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\n", r.ID, r.Severity, oneLine(r.Describe()), r.Threshold(), oneLine(when), voids, src, r.Fingerprint[:12])
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	for _, r := range rs.Rules {
		if r.Description != "" {
			fmt.Fprintf(w, "\n%s: %s", r.ID, r.Description)
		}
	}
	fmt.Fprintln(w)
	return nil
}

func oneLine(s string) string { return strings.Join(strings.Fields(s), " ") }

func rulesCheck(env *Env, args []string) error {
	fs, cats := rulesFlags(env, "check", "[--catalogs NAME,...] FILE")
	pos, err := parseArgs(env, fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usageError("rules check: want exactly one FILE, got %d", len(pos))
	}
	rs, err := loadRules(env, pos[0], *cats)
	if err != nil {
		return err
	}
	fmt.Fprintf(env.Stdout, "%s: ok, %d rules, fingerprint %s\n", pos[0], len(rs.Rules), rs.Fingerprint)
	return nil
}
