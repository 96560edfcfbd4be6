package rules

import (
	_ "embed"
	"errors"
	"fmt"
	"math"
	"os"
	"regexp"
	"sort"
	"starvet/internal/retired"
	"strconv"
	"strings"

	"github.com/BurntSushi/toml"

	"starvet/catalog"
)

// Severity is what failing a rule does to a star.
type Severity string

const (
	Reject Severity = "reject"
	Flag   Severity = "flag"
)

// AllCatalogs as a match rule's catalog applies it to every secondary catalog.
const AllCatalogs = "*"

// Schema tells the loader which secondary catalogs exist, in campaign order.
type Schema struct {
	Catalogs []string
	// AnyCatalog makes the loader accept every catalog name the file uses
	// (a match rule's catalog, or the prefix of a <name>_match_prob-style
	// variable) and append it to Catalogs. For checking a file without a
	// campaign.
	AnyCatalog bool
}

// Rule is one loaded, compiled rule.
type Rule struct {
	ID          string
	Description string
	Severity    Severity
	Check       Check // "" for an expression rule
	Expr        *Expr // expression rule only
	When        *Expr // optional precondition
	Source      string
	Line        int // line of the [[rule]] header

	Field  catalog.Field   // the field tested by single-field checks, -1 otherwise
	Fields []catalog.Field // required_fields, in file order
	Dir    Direction
	Limit  float64 // NaN when the check has no limit

	// Match checks.
	Catalog        string  // a name or AllCatalogs
	CatalogIdx     []int   // indices into RuleSet.Catalogs the rule applies to
	MinProb        float64 // NaN when not set
	MaxSepArcsec   float64 // NaN when not set
	AllowAmbiguous bool

	// Voids lists fields that later stages must treat as missing when the
	// rule fails: a flag on a low signal-to-noise spectrum can keep the
	// star but stop its radial velocity from deciding the verdict.
	Voids []catalog.Field

	Fingerprint string
}

// RuleSet is a loaded rule file. Rules are sorted by id; that is the order
// in which they are evaluated and reported.
type RuleSet struct {
	Name        string
	Version     string
	File        string
	Catalogs    []string // the schema's catalogs (with AnyCatalog, including those found)
	Rules       []*Rule
	Fingerprint string
}

//go:embed default.toml
var defaultTOML []byte

// DefaultFile is the name errors and `rules show` use for the embedded set.
const DefaultFile = "default.toml (built in)"

// DefaultText returns the embedded default rule file.
func DefaultText() []byte { return append([]byte(nil), defaultTOML...) }

// Default loads the embedded default rule set.
func Default(schema Schema) (*RuleSet, error) {
	return Parse(DefaultFile, defaultTOML, schema)
}

// Load reads and compiles a rule file.
func Load(path string, schema Schema) (*RuleSet, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("rules: %w", err)
	}
	return Parse(path, data, schema)
}

var idRe = regexp.MustCompile(`^[a-z0-9]+(-[a-z0-9]+)*$`)

type loader struct {
	ruleNo int // 1-based number of the rule being checked, 0 outside rules
	file   string
	lay    layout
	errs   LoadErrors
	schema Schema
	env    *exprEnv
}

func (l *loader) add(p pos, ruleID string, kind error, format string, a ...any) {
	if p.Line < 1 {
		p = pos{1, 1}
	}
	l.errs = append(l.errs, &LoadError{File: l.file, Line: p.Line, Col: p.Col, RuleID: ruleID, RuleNo: l.ruleNo, Kind: kind, Msg: fmt.Sprintf(format, a...)})
}

// Parse compiles rule-file text; name is used in error messages. On error it
// returns LoadErrors holding every problem found.
func Parse(name string, data []byte, schema Schema) (*RuleSet, error) {
	seenCat := map[string]bool{}
	for _, c := range schema.Catalogs {
		if c == "" || c == AllCatalogs || seenCat[c] {
			return nil, fmt.Errorf("rules: %w: catalog name %q empty, reserved or repeated", ErrSchema, c)
		}
		seenCat[c] = true
	}
	schema.Catalogs = append([]string(nil), schema.Catalogs...)
	l := &loader{file: name, schema: schema}
	text := string(data)
	var raw map[string]any
	if _, err := toml.Decode(text, &raw); err != nil {
		var pe toml.ParseError
		p := pos{1, 1}
		msg := err.Error()
		if errors.As(err, &pe) {
			p = pos{pe.Position.Line, pe.Position.Col}
			msg = pe.Message
		}
		l.add(p, "", ErrSyntax, "%s", msg)
		return nil, l.errs
	}
	l.lay = scanLayout(text)

	rs := &RuleSet{File: name}
	for _, k := range sortedKeys(raw) {
		v := raw[k]
		p := l.lay.top[k]
		if op, ok := l.lay.other[k]; ok && p.Line == 0 {
			p = op
		}
		switch k {
		case "name", "version":
			s, ok := v.(string)
			if !ok || s == "" {
				l.add(p, "", ErrParamType, "%s must be a non-empty string", k)
			} else if k == "name" {
				rs.Name = s
			} else {
				rs.Version = s
			}
		case "rule":
		default:
			l.add(p, "", ErrUnknownKey, "unknown key %q (want name, version and [[rule]] tables)", k)
		}
	}
	for _, k := range []string{"name", "version"} {
		if _, ok := raw[k]; !ok {
			l.add(pos{1, 1}, "", ErrMissingParam, "missing top-level %s", k)
		}
	}

	var tables []map[string]any
	switch r := raw["rule"].(type) {
	case nil:
		if _, ok := raw["rule"]; ok {
			l.add(l.lay.top["rule"], "", ErrParamType, "rule must be [[rule]] tables")
		}
	case []map[string]any:
		tables = r
	case []any:
		for _, t := range r {
			m, ok := t.(map[string]any)
			if !ok {
				l.add(l.lay.top["rule"], "", ErrParamType, "rule must be [[rule]] tables")
				break
			}
			tables = append(tables, m)
		}
	default:
		p := l.lay.top["rule"]
		if op, ok := l.lay.other["rule"]; ok {
			p = op
		}
		l.add(p, "", ErrParamType, "rule must be [[rule]] tables")
	}

	if schema.AnyCatalog {
		l.discoverCatalogs(tables)
	}
	rs.Catalogs = l.schema.Catalogs
	l.env = newExprEnv(rs.Catalogs)

	ids := map[string]int{}
	for i, t := range tables {
		var rp rulePos
		if i < len(l.lay.rules) {
			rp = l.lay.rules[i]
		} else {
			rp = rulePos{header: l.lay.top["rule"], keys: map[string]pos{}}
		}
		l.ruleNo = i + 1
		r, ok := l.rule(t, rp)
		if r.ID != "" {
			if first, dup := ids[r.ID]; dup {
				l.add(keyPos(rp, "id"), r.ID, ErrDuplicateID, "duplicate id (first used by the rule on line %d)", first)
				ok = false
			} else {
				ids[r.ID] = rp.header.Line
			}
		}
		if ok {
			rs.Rules = append(rs.Rules, r)
		}
	}
	l.ruleNo = 0
	if len(l.errs) > 0 {
		sort.SliceStable(l.errs, func(i, j int) bool {
			if l.errs[i].Line != l.errs[j].Line {
				return l.errs[i].Line < l.errs[j].Line
			}
			return l.errs[i].Col < l.errs[j].Col
		})
		return nil, l.errs
	}
	sort.Slice(rs.Rules, func(i, j int) bool { return rs.Rules[i].ID < rs.Rules[j].ID })
	rs.Fingerprint = setFingerprint(rs.Rules)
	return rs, nil
}

// discoverCatalogs appends every catalog name the file mentions.
func (l *loader) discoverCatalogs(tables []map[string]any) {
	known := map[string]bool{}
	for _, c := range l.schema.Catalogs {
		known[c] = true
	}
	addName := func(c string) {
		if c != "" && c != AllCatalogs && !known[c] {
			known[c] = true
			l.schema.Catalogs = append(l.schema.Catalogs, c)
		}
	}
	for _, t := range tables {
		if c, ok := t["catalog"].(string); ok {
			addName(c)
		}
		for _, k := range []string{"expr", "when"} {
			if s, ok := t[k].(string); ok {
				for _, m := range matchVarRe.FindAllStringSubmatch(s, -1) {
					addName(m[1])
				}
			}
		}
	}
}

func keyPos(rp rulePos, key string) pos {
	if p, ok := rp.keys[key]; ok {
		return p
	}
	return rp.header
}

// fieldList reads a list of canonical field names, reporting problems at p.
func (l *loader) fieldList(v any, p pos, id, key string) []catalog.Field {
	list, ok := v.([]any)
	if !ok {
		l.add(p, id, ErrParamType, "%s must be a list of field names, got %s", key, tomlType(v))
		return nil
	}
	var out []catalog.Field
	seen := map[catalog.Field]bool{}
	for _, e := range list {
		s, ok := e.(string)
		if !ok {
			l.add(p, id, ErrParamType, "%s must hold strings, got %s", key, tomlType(e))
			continue
		}
		f, ok := fieldByName[s]
		if !ok {
			l.add(p, id, ErrUnknownField, "unknown field %q%s", s, retired.Hint(s))
			continue
		}
		if !seen[f] {
			seen[f] = true
			out = append(out, f)
		}
	}
	return out
}

// rule checks and compiles one [[rule]] table; ok is false when the table
// has errors (which are recorded).
func (l *loader) rule(t map[string]any, rp rulePos) (r *Rule, ok bool) {
	nErr := len(l.errs)
	r = &Rule{Field: -1, Limit: math.NaN(), MinProb: math.NaN(), MaxSepArcsec: math.NaN(), Line: rp.header.Line}

	str := func(key string, required bool) string {
		v, ok := t[key]
		if !ok {
			if required {
				l.add(rp.header, r.ID, ErrMissingParam, "missing %s", key)
			}
			return ""
		}
		s, ok := v.(string)
		if !ok {
			l.add(keyPos(rp, key), r.ID, ErrParamType, "%s must be a string, got %s", key, tomlType(v))
			return ""
		}
		return s
	}

	r.ID = str("id", true)
	if _, ok := t["id"]; ok && r.ID != "" && !idRe.MatchString(r.ID) {
		l.add(keyPos(rp, "id"), r.ID, ErrBadID, "id must be lower-case letters, digits and single hyphens")
	} else if _, ok := t["id"].(string); ok && r.ID == "" {
		l.add(keyPos(rp, "id"), "", ErrBadID, "id is empty")
	}
	r.Description = str("description", false)
	r.Source = str("source", false)
	sev := str("severity", true)
	switch Severity(sev) {
	case Reject, Flag:
		r.Severity = Severity(sev)
	default:
		if _, isStr := t["severity"].(string); isStr { // absent or not a string: reported by str
			l.add(keyPos(rp, "severity"), r.ID, ErrSeverity, "severity %q: want reject or flag", sev)
		}
	}

	check := str("check", false)
	exprSrc := str("expr", false)
	_, hasCheck := t["check"]
	_, hasExpr := t["expr"]
	var spec checkSpec
	switch {
	case hasCheck && hasExpr:
		l.add(keyPos(rp, "expr"), r.ID, ErrCheckOrExpr, "has both check and expr")
	case !hasCheck && !hasExpr:
		l.add(rp.header, r.ID, ErrCheckOrExpr, "has neither check nor expr")
	case hasCheck && check != "":
		var ok bool
		spec, ok = checkSpecs[Check(check)]
		if !ok {
			l.add(keyPos(rp, "check"), r.ID, ErrUnknownCheck, "unknown check %q%s (want one of %s)", check, retired.Hint(check), checkNames())
		} else {
			r.Check = Check(check)
			r.Dir = spec.dir
			r.Field = spec.field
		}
	case hasExpr && exprSrc != "":
		r.Expr = l.compile(exprSrc, "expr", rp, r.ID)
	case hasCheck:
		if _, isStr := t["check"].(string); isStr {
			l.add(keyPos(rp, "check"), r.ID, ErrUnknownCheck, "check is empty")
		}
	}

	allowed := map[string]paramKind{}
	for _, p := range spec.params {
		allowed[p.key] = p.kind
	}
	for _, k := range sortedKeys(t) {
		if commonKeys[k] {
			continue
		}
		if _, ok := allowed[k]; ok {
			continue
		}
		if r.Check == "" && hasCheck && check != "" {
			continue // unknown check already reported
		}
		what := "an expression rule"
		if r.Check != "" {
			what = "check " + string(r.Check)
		}
		l.add(keyPos(rp, k), r.ID, ErrUnknownKey, "unknown key %q for %s", k, what)
	}

	for _, p := range spec.params {
		v, ok := t[p.key]
		if !ok {
			if p.required {
				l.add(rp.header, r.ID, ErrMissingParam, "check %s needs %s (%s)", r.Check, p.key, p.kind)
			}
			continue
		}
		kp := keyPos(rp, p.key)
		switch p.kind {
		case kindNumber:
			x, ok := number(v)
			if !ok {
				l.add(kp, r.ID, ErrParamType, "%s must be a number, got %s", p.key, tomlType(v))
				continue
			}
			if math.IsNaN(x) || math.IsInf(x, 0) {
				l.add(kp, r.ID, ErrBadValue, "%s must be finite", p.key)
				continue
			}
			switch p.key {
			case "limit":
				r.Limit = x
			case "min_prob":
				if x < 0 || x > 1 {
					l.add(kp, r.ID, ErrBadValue, "min_prob %v outside [0, 1]", x)
				}
				r.MinProb = x
			case "max_sep_arcsec":
				if x < 0 {
					l.add(kp, r.ID, ErrBadValue, "max_sep_arcsec %v is negative", x)
				}
				r.MaxSepArcsec = x
			}
		case kindBool:
			b, ok := v.(bool)
			if !ok {
				l.add(kp, r.ID, ErrParamType, "%s must be true or false, got %s", p.key, tomlType(v))
				continue
			}
			r.AllowAmbiguous = b
		case kindField:
			s, ok := v.(string)
			if !ok {
				l.add(kp, r.ID, ErrParamType, "%s must be a field name string, got %s", p.key, tomlType(v))
				continue
			}
			f, ok := fieldByName[s]
			if !ok {
				l.add(kp, r.ID, ErrUnknownField, "unknown field %q%s", s, retired.Hint(s))
				continue
			}
			r.Field = f
		case kindFieldList:
			list, ok := v.([]any)
			if !ok {
				l.add(kp, r.ID, ErrParamType, "%s must be a list of field names, got %s", p.key, tomlType(v))
				continue
			}
			if len(list) == 0 {
				l.add(kp, r.ID, ErrBadValue, "%s is empty", p.key)
			}
			seen := map[catalog.Field]bool{}
			for _, e := range list {
				s, ok := e.(string)
				if !ok {
					l.add(kp, r.ID, ErrParamType, "%s must hold strings, got %s", p.key, tomlType(e))
					continue
				}
				f, ok := fieldByName[s]
				if !ok {
					l.add(kp, r.ID, ErrUnknownField, "unknown field %q%s", s, retired.Hint(s))
					continue
				}
				if !seen[f] {
					seen[f] = true
					r.Fields = append(r.Fields, f)
				}
			}
		case kindCatalog:
			s, ok := v.(string)
			if !ok {
				l.add(kp, r.ID, ErrParamType, "catalog must be a string, got %s", tomlType(v))
				continue
			}
			r.Catalog = s
			if s == AllCatalogs {
				r.CatalogIdx = make([]int, len(l.schema.Catalogs))
				for i := range r.CatalogIdx {
					r.CatalogIdx[i] = i
				}
				continue
			}
			idx := -1
			for i, c := range l.schema.Catalogs {
				if c == s {
					idx = i
				}
			}
			if idx < 0 {
				l.add(kp, r.ID, ErrUnknownCatalog, "unknown catalog %q (secondary catalogs: %s)", s, listOrNone(l.schema.Catalogs))
				continue
			}
			r.CatalogIdx = []int{idx}
		}
	}
	if r.Check == MatchQuality && math.IsNaN(r.MinProb) && math.IsNaN(r.MaxSepArcsec) && r.AllowAmbiguous {
		l.add(rp.header, r.ID, ErrMissingParam, "match check tests nothing: give min_prob, max_sep_arcsec, or leave allow_ambiguous false")
	}

	if v, ok := t["voids"]; ok {
		r.Voids = l.fieldList(v, keyPos(rp, "voids"), r.ID, "voids")
	}

	if _, ok := t["when"]; ok {
		if w := str("when", false); w != "" {
			r.When = l.compile(w, "when", rp, r.ID)
		} else if _, isStr := t["when"].(string); isStr {
			l.add(keyPos(rp, "when"), r.ID, ErrExpr, "when is empty")
		}
	}
	if hasExpr && exprSrc == "" {
		if _, isStr := t["expr"].(string); isStr {
			l.add(keyPos(rp, "expr"), r.ID, ErrExpr, "expr is empty")
		}
	}
	if len(l.errs) > nErr {
		return r, false
	}
	r.Fingerprint = ruleFingerprint(r)
	return r, true
}

func (l *loader) compile(src, key string, rp rulePos, id string) *Expr {
	e, fe, err := l.env.compile(src)
	if err == nil {
		return e
	}
	p := keyPos(rp, key)
	msg := err.Error()
	if old, col, ok := retiredName(src); ok {
		msg = fmt.Sprintf("%s: unknown name %s%s (at column %d of the expression)", key, old, retired.Hint(old), col)
	} else if fe != nil {
		msg = fmt.Sprintf("%s: %s (at column %d of the expression)", key, fe.Message, fe.Column+1)
	} else {
		msg = key + ": " + msg
	}
	l.add(p, id, ErrExpr, "%s", msg)
	return nil
}

func number(v any) (float64, bool) {
	switch x := v.(type) {
	case float64:
		return x, true
	case int64:
		return float64(x), true
	}
	return 0, false
}

func tomlType(v any) string {
	switch v.(type) {
	case string:
		return "a string"
	case int64:
		return "an integer"
	case float64:
		return "a float"
	case bool:
		return "a boolean"
	case []any, []map[string]any:
		return "an array"
	case map[string]any:
		return "a table"
	}
	return fmt.Sprintf("%T", v)
}

func sortedKeys(m map[string]any) []string {
	ks := make([]string, 0, len(m))
	for k := range m {
		ks = append(ks, k)
	}
	sort.Strings(ks)
	return ks
}

func checkNames() string {
	var ns []string
	for c := range checkSpecs {
		ns = append(ns, string(c))
	}
	sort.Strings(ns)
	return strings.Join(ns, ", ")
}

func listOrNone(s []string) string {
	if len(s) == 0 {
		return "none declared"
	}
	return strings.Join(s, ", ")
}

// Describe returns the rule's test in words, e.g. "fit_residual" or
// "expr: pm_total > 50".
func (r *Rule) Describe() string {
	switch {
	case r.Expr != nil:
		return "expr: " + r.Expr.Source
	case r.Check == AtLeast || r.Check == AtMost:
		return string(r.Check) + " " + catalog.Fields[r.Field].Name
	case r.Check == MatchQuality:
		return "match " + r.Catalog
	case r.Check == RequiredFields:
		return "required_fields"
	}
	return string(r.Check)
}

// Threshold renders the pass condition, e.g. "<= 1.4".
func (r *Rule) Threshold() string {
	switch r.Check {
	case "":
		return "true"
	case ParallaxSignificance:
		return ">= " + fmtNum(r.Limit) + " sigma"
	case Duplicate:
		return "no duplicate"
	case RequiredFields:
		names := make([]string, len(r.Fields))
		for i, f := range r.Fields {
			names[i] = catalog.Fields[f].Name
		}
		return "present: " + strings.Join(names, ", ")
	case MatchQuality:
		var parts []string
		if !math.IsNaN(r.MinProb) {
			parts = append(parts, "prob >= "+fmtNum(r.MinProb))
		}
		if !math.IsNaN(r.MaxSepArcsec) {
			parts = append(parts, "sep <= "+fmtNum(r.MaxSepArcsec)+" arcsec")
		}
		if !r.AllowAmbiguous {
			parts = append(parts, "unambiguous")
		}
		return strings.Join(parts, ", ")
	}
	op := ">= "
	if r.Dir == Max {
		op = "<= "
	}
	s := op + fmtNum(r.Limit)
	if r.Field >= 0 {
		if u := catalog.Fields[r.Field].Unit; u != "" {
			s += " " + u
		}
	}
	return s
}

func fmtNum(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }
