package rules

import (
	"math"
	"sort"
	"strconv"

	"starvet/catalog"
	"starvet/internal/fingerprint"
)

// canonicalRule holds everything that can change a verdict. Description and
// source are documentation and are left out, so rewording them does not
// force a re-vet. Numbers are written in Go's shortest form, so 1.4 and
// 1.40 agree; expressions are re-printed from their syntax tree, so spacing
// does not matter.
type canonicalRule struct {
	ID             string   `json:"id"`
	Severity       string   `json:"severity"`
	Check          string   `json:"check,omitempty"`
	Expr           string   `json:"expr,omitempty"`
	When           string   `json:"when,omitempty"`
	Field          string   `json:"field,omitempty"`
	Fields         []string `json:"fields,omitempty"`
	Limit          string   `json:"limit,omitempty"`
	Catalog        string   `json:"catalog,omitempty"`
	MinProb        string   `json:"min_prob,omitempty"`
	MaxSepArcsec   string   `json:"max_sep_arcsec,omitempty"`
	AllowAmbiguous bool     `json:"allow_ambiguous,omitempty"`
	Voids          []string `json:"voids,omitempty"`
}

// canonNum is a number in the fingerprint: exact, and pinned here rather
// than shared with text for people, so a change of display never changes a
// fingerprint.
func canonNum(x float64) string {
	if math.IsNaN(x) {
		return ""
	}
	return strconv.FormatFloat(x, 'g', -1, 64)
}

func ruleFingerprint(r *Rule) string {
	c := canonicalRule{
		ID:             r.ID,
		Severity:       string(r.Severity),
		Check:          string(r.Check),
		Limit:          canonNum(r.Limit),
		Catalog:        r.Catalog,
		MinProb:        canonNum(r.MinProb),
		MaxSepArcsec:   canonNum(r.MaxSepArcsec),
		AllowAmbiguous: r.AllowAmbiguous,
	}
	if r.Expr != nil {
		c.Expr = r.Expr.canonical
	}
	if r.When != nil {
		c.When = r.When.canonical
	}
	if r.Field >= 0 && (r.Check == AtLeast || r.Check == AtMost) {
		c.Field = catalog.Fields[r.Field].Name
	}
	for _, f := range r.Fields {
		c.Fields = append(c.Fields, catalog.Fields[f].Name)
	}
	sort.Strings(c.Fields) // the order of required fields does not matter
	for _, f := range r.Voids {
		c.Voids = append(c.Voids, catalog.Fields[f].Name)
	}
	sort.Strings(c.Voids)
	fp, err := fingerprint.JSON(c)
	if err != nil {
		panic(err) // only strings and bools: cannot fail
	}
	return fp
}

// setFingerprint hashes the sorted rule fingerprints. The set's name and
// version are labels and are not part of it.
func setFingerprint(rs []*Rule) string {
	fps := make([]string, len(rs))
	for i, r := range rs {
		fps[i] = r.Fingerprint
	}
	sort.Strings(fps)
	return fingerprint.Lines(fps)
}
