// Command starvet cross-matches astrometric and spectroscopic catalogs,
// applies quality cuts, computes Galactic rest-frame kinematics and keeps a
// SQLite ledger of every star's status and the reasons behind it.
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"runtime/debug"
	"strings"
	"syscall"
	"time"

	"starvet/vetting"

	"github.com/mattn/go-isatty"
	"github.com/rs/zerolog"
)

// errUsage marks a usage mistake: exit code 2.
var errUsage = errors.New("usage")

// usageError wraps a message as a usage mistake.
func usageError(format string, a ...any) error {
	return fmt.Errorf("%w: %s", errUsage, fmt.Sprintf(format, a...))
}

// Env is what every subcommand receives: streams and the logger. Nothing
// global.
type Env struct {
	Stdout, Stderr io.Writer
	Log            zerolog.Logger
	Quiet          bool
	StderrIsTTY    bool
}

type command struct {
	name    string
	summary string
	run     func(ctx context.Context, env *Env, args []string) error
}

func commands() []command {
	return []command{
		{"demo", "write an invented campaign, run it twice and print the recovery figures", runDemo},
		{"columns", "show how a catalog file's columns map onto starvet's fields", runColumns},
		{"match", "cross-match a campaign's catalogs and write one row per primary source", runMatch},
		{"run", "vet a campaign into the SQLite ledger (the main job)", runRun},
		{"tile", "split a campaign into HEALPix sky tiles with margins, to run apart", runTile},
		{"dispatch", "run a split campaign's tiles (locally or as a Slurm job array), then gather", runDispatch},
		{"gather", "gather the ledgers of a split campaign's tiles into one run", runGather},
		{"rules", "show or check a rule set", runRules},
		{"why", "explain one star's status, run by run", runWhy},
		{"diff", "status transitions between two runs", runDiff},
		{"list", "list stars and their status", runList},
		{"runs", "one line per run in the ledger", runRuns},
		{"report", "write an HTML report with plots for a run", runReport},
		{"weigh", "weigh the Galaxy from a run's stars: the local escape speed and the halo mass", runWeigh},
	}
}

func mainUsage(w io.Writer, fs *flag.FlagSet) {
	fmt.Fprintf(w, "starvet vets hypervelocity-star candidates in merged catalogs.\n\n")
	fmt.Fprintf(w, "Usage: starvet [global options] COMMAND [options] [arguments]\n\nCommands:\n")
	for _, c := range commands() {
		fmt.Fprintf(w, "  %-8s %s\n", c.name, c.summary)
	}
	fmt.Fprintf(w, "\nGlobal options:\n")
	fs.SetOutput(w)
	fs.PrintDefaults()
	fmt.Fprintf(w, "\nRun 'starvet COMMAND --help' for a command's options.\n")
}

// Run parses the global options and dispatches to a subcommand.
func Run(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("starvet", flag.ContinueOnError)
	fs.SetOutput(io.Discard)
	level := fs.String("log-level", "info", "log level: debug, info, warn, error")
	format := fs.String("log-format", "console", "log format on stderr: console or json")
	quiet := fs.Bool("quiet", false, "no progress bars, progress log lines or per-stage info lines (warnings and errors still show)")
	if err := fs.Parse(args); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			mainUsage(stdout, fs)
			return nil
		}
		mainUsage(stderr, fs)
		return usageError("%v", err)
	}
	rest := fs.Args()
	if len(rest) == 0 {
		mainUsage(stderr, fs)
		return usageError("no command given")
	}
	if rest[0] == "help" {
		mainUsage(stdout, fs)
		return nil
	}
	lvl, err := zerolog.ParseLevel(strings.ToLower(*level))
	if err != nil {
		return usageError("--log-level %q: want debug, info, warn or error", *level)
	}
	levelSet := false
	fs.Visit(func(f *flag.Flag) { levelSet = levelSet || f.Name == "log-level" })
	if *quiet && !levelSet && lvl < zerolog.WarnLevel {
		lvl = zerolog.WarnLevel // --quiet also drops the per-stage info lines
	}
	var lw io.Writer
	switch *format {
	case "console":
		lw = zerolog.ConsoleWriter{Out: stderr, TimeFormat: time.TimeOnly, NoColor: !isTTY(stderr)}
	case "json":
		lw = stderr
	default:
		return usageError("--log-format %q: want console or json", *format)
	}
	env := &Env{
		Stdout:      stdout,
		Stderr:      stderr,
		Log:         zerolog.New(lw).Level(lvl).With().Timestamp().Logger(),
		Quiet:       *quiet,
		StderrIsTTY: isTTY(stderr),
	}
	for _, c := range commands() {
		if c.name == rest[0] {
			err := c.run(ctx, env, rest[1:])
			if errors.Is(err, errHelpShown) {
				return nil
			}
			return err
		}
	}
	mainUsage(stderr, fs)
	return usageError("unknown command %q", rest[0])
}

func isTTY(w io.Writer) bool {
	f, ok := w.(*os.File)
	return ok && isatty.IsTerminal(f.Fd())
}

// exitCode maps an error to the process exit status: 0 success, 2 bad
// usage, 1 any other failure.
func exitCode(err error) int {
	switch {
	case err == nil:
		return 0
	case errors.Is(err, errUsage):
		return 2
	default:
		return 1
	}
}

func main() {
	if os.Getenv("GOGC") == "" {
		debug.SetGCPercent(vetting.GCPercent)
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	err := Run(ctx, os.Args[1:], os.Stdout, os.Stderr)
	if err != nil && !errors.Is(err, errSilent) {
		fmt.Fprintf(os.Stderr, "starvet: %v\n", err)
	}
	os.Exit(exitCode(err))
}

// errSilent is returned by a command that already printed its failure.
var errSilent = errors.New("failed")

// newFlags returns a flag set for a subcommand whose --help prints usage,
// a one-line synopsis and every option.
func newFlags(env *Env, name, synopsis, about string) *flag.FlagSet {
	fs := flag.NewFlagSet("starvet "+name, flag.ContinueOnError)
	fs.SetOutput(env.Stderr)
	fs.Usage = func() {
		w := fs.Output()
		fmt.Fprintf(w, "Usage: starvet %s %s\n\n%s\n\nOptions:\n", name, synopsis, about)
		fs.PrintDefaults()
	}
	return fs
}

// parseFlags parses args; --help prints to stdout and returns errHelpShown.
func parseFlags(env *Env, fs *flag.FlagSet, args []string) error {
	for _, a := range args {
		if a == "-h" || a == "--help" || a == "-help" {
			fs.SetOutput(env.Stdout)
			fs.Usage()
			return errHelpShown
		}
	}
	if err := fs.Parse(args); err != nil {
		return usageError("%v", err)
	}
	return nil
}

// errHelpShown ends a command successfully after --help.
var errHelpShown = errors.New("help shown")

// parseArgs parses a subcommand's flags, which may come before or after
// its positional arguments, and returns the positional ones; "--" ends
// the flags.
func parseArgs(env *Env, fs *flag.FlagSet, args []string) ([]string, error) {
	var pos []string
	for {
		if err := parseFlags(env, fs, args); err != nil {
			return nil, err
		}
		rest := fs.Args()
		if len(rest) == 0 {
			return pos, nil
		}
		// flag stops at "--" too; everything after it is positional.
		if i := len(args) - len(rest); i > 0 && args[i-1] == "--" {
			return append(pos, rest...), nil
		}
		pos = append(pos, rest[0])
		args = rest[1:]
	}
}
