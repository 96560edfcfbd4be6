package campaign

import (
	"path/filepath"

	"starvet/internal/fingerprint"
)

// Fingerprint holds the three campaign hashes.
type Fingerprint struct {
	Match string // what changes cross-match results
	Model string // what changes kinematic results
	All   string // every effective setting
}

// Fingerprint returns MatchHash, ModelHash and Hash together.
func (c *Campaign) Fingerprint() Fingerprint {
	return Fingerprint{Match: c.MatchHash(), Model: c.ModelHash(), All: c.Hash()}
}

// The hashes are hex SHA-256 of a JSON encoding of the effective
// (defaults-filled) values. JSON gives a fixed field order, sorted map keys
// and shortest round-trip floats, so equal settings hash equally however
// they were written. Paths enter relative to the campaign directory, so
// moving a campaign with its files keeps its hashes. File contents are not
// included: the ledger records each catalog's SHA-256 separately, and the
// rule set has its own fingerprint.

type matchPart struct {
	Match    Match
	Catalogs []catPart
}

type catPart struct {
	Name, File, Role, Release string
	EpochJyr, PositionErrMas  float64
	Columns, Units            map[string]string
	NullMarkers               []string
	// Empty for a comma-separated file named by its ending, so that the
	// hashes of campaigns written before these keys do not change.
	Format    string `json:",omitempty"`
	HDU       string `json:",omitempty"`
	Table     string `json:",omitempty"`
	Delimiter string `json:",omitempty"`
}

type modelPart struct {
	Seed                 int64
	ParallaxZeroPointMas float64
	Galaxy               Galaxy
	Potential            Potential
	Kinematics           Kinematics
}

type allPart struct {
	Name, Ledger, Rules string
	NullMarkers         []string
	Match               matchPart
	Model               modelPart
	Tile                *Tile `json:",omitempty"`
}

func (c *Campaign) rel(path string) string {
	if r, err := filepath.Rel(c.Dir, path); err == nil {
		return filepath.ToSlash(r)
	}
	return filepath.ToSlash(path)
}

func (c *Campaign) matchPart() matchPart {
	m := matchPart{Match: c.Match}
	for _, cs := range c.Catalogs {
		m.Catalogs = append(m.Catalogs, catPart{Name: cs.Name, File: c.rel(cs.File), Role: string(cs.Role),
			Release: cs.Release, EpochJyr: cs.EpochJyr, PositionErrMas: cs.PositionErrMas,
			Columns: cs.Columns, Units: cs.Units, NullMarkers: cs.NullMarkers,
			Format: cs.Format, HDU: cs.HDU, Table: cs.Table, Delimiter: cs.Delimiter})
	}
	return m
}

func (c *Campaign) modelPart() modelPart {
	return modelPart{Seed: c.Seed, ParallaxZeroPointMas: c.ParallaxZeroPointMas, Galaxy: c.Galaxy,
		Potential: c.Potential, Kinematics: c.Kinematics}
}

// MatchHash covers the match settings and every catalog spec.
func (c *Campaign) MatchHash() string { return hashJSON(c.matchPart()) }

// ModelHash covers galaxy, potential, kinematics, seed and parallax zero
// point: anything that changes kinematic results for fixed inputs.
func (c *Campaign) ModelHash() string { return hashJSON(c.modelPart()) }

// Hash covers every effective setting.
func (c *Campaign) Hash() string {
	rules := c.Rules
	if rules != DefaultRules {
		rules = c.rel(rules)
	}
	return hashJSON(allPart{Name: c.Name, Ledger: c.rel(c.Ledger), Rules: rules, NullMarkers: c.NullMarkers,
		Match: c.matchPart(), Model: c.modelPart(), Tile: c.Tile})
}

func hashJSON(v any) string {
	fp, err := fingerprint.JSON(v)
	if err != nil {
		panic("campaign: cannot encode fingerprint: " + err.Error()) // only plain types: a programming error
	}
	return fp
}
