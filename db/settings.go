package db

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"math"
	"regexp"
	"slices"
	"starvet/internal/fingerprint"
	"strconv"
	"strings"
)

// Setting is one recorded setting (table run_settings; the campaign
// package names them, SCHEMA.md defines each). Numbers are written
// exactly: the shortest decimal text that reads back as the same float64.
type Setting struct {
	Name  string
	Value string
}

// FloatSetting writes a number as a Setting.
func FloatSetting(name string, v float64) Setting {
	return Setting{name, strconv.FormatFloat(v, 'g', -1, 64)}
}

// RunSettings is what a run recorded of the settings that decided its
// results. Runs written before schema 8 recorded none.
type RunSettings struct {
	Values   []Setting // sorted by name when read from the ledger
	RuleText string    // the effective rule file, as read
}

// Recorded says whether the run recorded its settings.
func (s *RunSettings) Recorded() bool { return s != nil && len(s.Values) > 0 }

// Get returns the value of a setting and whether it was recorded.
func (s *RunSettings) Get(name string) (string, bool) {
	if s == nil {
		return "", false
	}
	for _, v := range s.Values {
		if v.Name == name {
			return v.Value, true
		}
	}
	return "", false
}

// Float returns a numeric setting; false if it was not recorded or is not
// a number.
func (s *RunSettings) Float(name string) (float64, bool) {
	v, ok := s.Get(name)
	if !ok {
		return math.NaN(), false
	}
	f, err := strconv.ParseFloat(v, 64)
	if err != nil {
		return math.NaN(), false
	}
	return f, true
}

// Map returns the settings as name -> value.
func (s *RunSettings) Map() map[string]string {
	m := map[string]string{}
	if s != nil {
		for _, v := range s.Values {
			m[v.Name] = v.Value
		}
	}
	return m
}

// ConfigHash is the fingerprint stored as runs.config_hash: hex SHA-256 of
// the lines "name=value\n" in byte order of name, then one empty line,
// then the rule text. check (run by BeginRun) keeps it unambiguous.
func (s *RunSettings) ConfigHash() string {
	vs := slices.Clone(s.Values)
	slices.SortFunc(vs, func(a, b Setting) int { return strings.Compare(a.Name, b.Name) })
	var b []byte
	for _, v := range vs {
		b = append(append(append(append(b, v.Name...), '='), v.Value...), '\n')
	}
	b = append(append(b, '\n'), s.RuleText...)
	return fingerprint.Hex(b, 0)
}

var settingNameRE = regexp.MustCompile(`^[a-z0-9_]+(\.[a-z0-9_-]+)*$`)

// ErrSettings is wrapped by BeginRun when the settings cannot be recorded.
var ErrSettings = errors.New("run settings cannot be recorded")

// check refuses settings that could not be recorded or fingerprinted
// exactly: none at all, a name twice or outside our name form, a value
// with a line break.
func (s *RunSettings) check() error {
	if len(s.Values) == 0 {
		return fmt.Errorf("%w: a run must record the settings that decide its results, and none were given", ErrSettings)
	}
	seen := map[string]bool{}
	for _, v := range s.Values {
		switch {
		case !settingNameRE.MatchString(v.Name):
			return fmt.Errorf("%w: setting name %q is not of the form section.name (lower case, digits, _ and -)", ErrSettings, v.Name)
		case seen[v.Name]:
			return fmt.Errorf("%w: setting %s given twice", ErrSettings, v.Name)
		case strings.ContainsAny(v.Value, "\r\n"):
			return fmt.Errorf("%w: setting %s = %q has a line break", ErrSettings, v.Name, v.Value)
		}
		seen[v.Name] = true
	}
	return nil
}

// insertSettings writes a run's settings in the transaction that inserts
// its row.
func insertSettings(ctx context.Context, tx *sql.Tx, runID int64, s *RunSettings) error {
	st, err := tx.PrepareContext(ctx, "INSERT INTO run_settings (run_id, name, value) VALUES (?, ?, ?)")
	if err != nil {
		return err
	}
	defer st.Close()
	for _, v := range s.Values {
		if _, err := st.ExecContext(ctx, runID, v.Name, v.Value); err != nil {
			return fmt.Errorf("setting %s: %w", v.Name, err)
		}
	}
	_, err = tx.ExecContext(ctx, "UPDATE runs SET rule_text = ? WHERE id = ?", s.RuleText, runID)
	return err
}

// RunSettings returns what run runID recorded of its settings; for a run
// written before schema 8 it is empty (Recorded() false). An unknown run
// is ErrNoRun.
func (l *Ledger) RunSettings(ctx context.Context, runID int64) (*RunSettings, error) {
	var rule sql.NullString
	err := l.db.QueryRowContext(ctx, "SELECT rule_text FROM runs WHERE id = ?", runID).Scan(&rule)
	if errors.Is(err, sql.ErrNoRows) {
		return nil, fmt.Errorf("ledger %s has no run %d: %w", l.path, runID, ErrNoRun)
	}
	if err != nil {
		return nil, fmt.Errorf("ledger %s: run %d settings: %w", l.path, runID, err)
	}
	s := &RunSettings{RuleText: rule.String}
	rows, err := l.db.QueryContext(ctx, "SELECT name, value FROM run_settings WHERE run_id = ? ORDER BY name", runID)
	if err != nil {
		return nil, fmt.Errorf("ledger %s: run %d settings: %w", l.path, runID, err)
	}
	defer rows.Close()
	for rows.Next() {
		var v Setting
		if err := rows.Scan(&v.Name, &v.Value); err != nil {
			return nil, fmt.Errorf("ledger %s: run %d settings: %w", l.path, runID, err)
		}
		s.Values = append(s.Values, v)
	}
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("ledger %s: run %d settings: %w", l.path, runID, err)
	}
	return s, nil
}
