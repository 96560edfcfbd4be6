package rules

import (
	_ "embed"
	"errors"
	"fmt"
	"math"
	"os"
	"regexp"
	"sort"
	"strings"

	"github.com/BurntSushi/toml"

	"starvet/catalog"
	"starvet/internal/numfmt"
	"starvet/internal/position"
	"starvet/internal/retired"
	"starvet/internal/tomlpos"
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
	Text        string   // the rule file's text, as compiled: what the ledger records
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
	pos    *tomlpos.Map
	errs   position.Errors
	schema Schema
	env    *exprEnv
}

// add records a problem at p. What names the rule as people read it: by
// its id, else by its number in the file.
func (l *loader) add(p tomlpos.Pos, ruleID string, kind error, format string, a ...any) {
	if p.Line < 1 {
		p = tomlpos.Pos{Line: 1, Col: 1}
	}
	what := ""
	switch {
	case ruleID != "":
		what = fmt.Sprintf("rule %q", ruleID)
	case l.ruleNo > 0:
		what = fmt.Sprintf("rule #%d (no id)", l.ruleNo)
	}
	l.errs = append(l.errs, &position.Error{File: l.file, Line: p.Line, Col: p.Col, Name: ruleID, What: what, Msg: fmt.Sprintf(format, a...), Err: kind})
}

// Parse compiles rule-file text; name is used in error messages. On error it
// returns position.Errors holding every problem found, in file order, each
// wrapping one of the Err* sentinels.
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
		p := tomlpos.Pos{Line: 1, Col: 1}
		msg := err.Error()
		if errors.As(err, &pe) {
			p = tomlpos.Pos{Line: pe.Position.Line, Col: pe.Position.Col}
			msg = pe.Message
		}
		l.add(p, "", ErrSyntax, "%s", msg)
		return nil, l.errs
	}
	l.pos = tomlpos.Scan(text)

	rs := &RuleSet{File: name, Text: text}
	l.header(raw, rs)
	tables := l.ruleTables(raw)
	if schema.AnyCatalog {
		l.discoverCatalogs(tables)
	}
	rs.Catalogs = l.schema.Catalogs
	l.env = newExprEnv(rs.Catalogs)

	rs.Rules = l.rules(tables)
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

// header reads the top-level keys name and version and reports any other
// top-level key or table except rule.
func (l *loader) header(raw map[string]any, rs *RuleSet) {
	for _, k := range sortedKeys(raw) {
		v := raw[k]
		p := l.pos.Near(k)
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
			l.add(tomlpos.Pos{Line: 1, Col: 1}, "", ErrMissingParam, "missing top-level %s", k)
		}
	}
}

// ruleTables returns the rule tables, from [[rule]] headers or an inline
// array of tables.
func (l *loader) ruleTables(raw map[string]any) []map[string]any {
	var tables []map[string]any
	switch r := raw["rule"].(type) {
	case nil:
		if _, ok := raw["rule"]; ok {
			l.add(l.pos.Near("rule"), "", ErrParamType, "rule must be [[rule]] tables")
		}
	case []map[string]any:
		tables = r
	case []any:
		for _, t := range r {
			m, ok := t.(map[string]any)
			if !ok {
				l.add(l.pos.Near("rule"), "", ErrParamType, "rule must be [[rule]] tables")
				break
			}
			tables = append(tables, m)
		}
	default:
		l.add(l.pos.Near("rule"), "", ErrParamType, "rule must be [[rule]] tables")
	}
	return tables
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

// rules checks and compiles every rule table and returns those without
// errors; an id used twice is an error at its second use.
func (l *loader) rules(tables []map[string]any) []*Rule {
	var out []*Rule
	ids := map[string]int{} // id -> line of its first rule
	for i, t := range tables {
		elem := tomlpos.Elem("rule", i)
		l.ruleNo = i + 1
		r, ok := l.rule(t, elem)
		if r.ID != "" {
			if first, dup := ids[r.ID]; dup {
				l.add(l.ruleAt(elem, "id"), r.ID, ErrDuplicateID, "duplicate id (first used by the rule on line %d)", first)
				ok = false
			} else {
				ids[r.ID] = r.Line
			}
		}
		if ok {
			out = append(out, r)
		}
	}
	l.ruleNo = 0
	return out
}

// ruleLoad is one [[rule]] table being checked and compiled.
type ruleLoad struct {
	*loader
	t    map[string]any
	elem string // the rule's path segment in the file, "rule#i"
	r    *Rule
	spec checkSpec // the built-in check's, zero for an expression rule

	check, exprSrc    string // the check and expr values when they are strings
	hasCheck, hasExpr bool
}

// ruleAt is the position of key in the rule elem ("rule#i"), else of the
// rule's [[rule]] header, else (an inline array of tables has no headers)
// of "rule =". With no key it is the header's position.
func (l *loader) ruleAt(elem string, key ...string) tomlpos.Pos {
	if p, ok := l.pos.Find(append([]string{elem}, key...)...); ok {
		return p
	}
	if p, ok := l.pos.Find(elem); ok {
		return p
	}
	return l.pos.Near("rule")
}

func (rl *ruleLoad) at(key string) tomlpos.Pos { return rl.ruleAt(rl.elem, key) }

func (rl *ruleLoad) headerPos() tomlpos.Pos { return rl.ruleAt(rl.elem) }

func (rl *ruleLoad) add(p tomlpos.Pos, kind error, format string, a ...any) {
	rl.loader.add(p, rl.r.ID, kind, format, a...)
}

// rule checks and compiles one [[rule]] table; ok is false when the table
// has errors (which are recorded).
func (l *loader) rule(t map[string]any, elem string) (r *Rule, ok bool) {
	nErr := len(l.errs)
	rl := &ruleLoad{loader: l, t: t, elem: elem,
		r: &Rule{Field: -1, Limit: math.NaN(), MinProb: math.NaN(), MaxSepArcsec: math.NaN(), Line: l.ruleAt(elem).Line}}
	rl.idAndSeverity()
	rl.checkOrExpr()
	rl.unknownKeys()
	rl.params()
	rl.voidsAndWhen()
	if len(l.errs) > nErr {
		return rl.r, false
	}
	rl.r.Fingerprint = ruleFingerprint(rl.r)
	return rl.r, true
}

// str returns the string value of key, "" when it is absent (an error if
// required) or not a string (an error).
func (rl *ruleLoad) str(key string, required bool) string {
	v, ok := rl.t[key]
	if !ok {
		if required {
			rl.add(rl.headerPos(), ErrMissingParam, "missing %s", key)
		}
		return ""
	}
	s, ok := v.(string)
	if !ok {
		rl.add(rl.at(key), ErrParamType, "%s must be a string, got %s", key, tomlType(v))
		return ""
	}
	return s
}

func (rl *ruleLoad) idAndSeverity() {
	r, t := rl.r, rl.t
	r.ID = rl.str("id", true)
	if _, ok := t["id"]; ok && r.ID != "" && !idRe.MatchString(r.ID) {
		rl.add(rl.at("id"), ErrBadID, "id must be lower-case letters, digits and single hyphens")
	} else if _, ok := t["id"].(string); ok && r.ID == "" {
		rl.add(rl.at("id"), ErrBadID, "id is empty")
	}
	r.Description = rl.str("description", false)
	r.Source = rl.str("source", false)
	sev := rl.str("severity", true)
	switch Severity(sev) {
	case Reject, Flag:
		r.Severity = Severity(sev)
	default:
		if _, isStr := t["severity"].(string); isStr { // absent or not a string: reported by str
			rl.add(rl.at("severity"), ErrSeverity, "severity %q: want reject or flag", sev)
		}
	}
}

// checkOrExpr reads the rule's test: exactly one of a built-in check and
// an expression.
func (rl *ruleLoad) checkOrExpr() {
	r := rl.r
	rl.check = rl.str("check", false)
	rl.exprSrc = rl.str("expr", false)
	_, rl.hasCheck = rl.t["check"]
	_, rl.hasExpr = rl.t["expr"]
	switch {
	case rl.hasCheck && rl.hasExpr:
		rl.add(rl.at("expr"), ErrCheckOrExpr, "has both check and expr")
	case !rl.hasCheck && !rl.hasExpr:
		rl.add(rl.headerPos(), ErrCheckOrExpr, "has neither check nor expr")
	case rl.hasCheck && rl.check != "":
		spec, ok := checkSpecs[Check(rl.check)]
		if !ok {
			rl.add(rl.at("check"), ErrUnknownCheck, "unknown check %q%s (want one of %s)", rl.check, retired.Hint(rl.check), checkNames())
			return
		}
		rl.spec = spec
		r.Check = Check(rl.check)
		r.Dir = spec.dir
		r.Field = spec.field
	case rl.hasExpr && rl.exprSrc != "":
		r.Expr = rl.compile(rl.exprSrc, "expr")
	case rl.hasCheck:
		if _, isStr := rl.t["check"].(string); isStr {
			rl.add(rl.at("check"), ErrUnknownCheck, "check is empty")
		}
	}
}

// unknownKeys reports keys that are neither common to every rule nor a
// parameter of the rule's check.
func (rl *ruleLoad) unknownKeys() {
	r := rl.r
	allowed := map[string]bool{}
	for _, p := range rl.spec.params {
		allowed[p.key] = true
	}
	for _, k := range sortedKeys(rl.t) {
		if commonKeys[k] || allowed[k] {
			continue
		}
		if r.Check == "" && rl.hasCheck && rl.check != "" {
			continue // unknown check already reported
		}
		what := "an expression rule"
		if r.Check != "" {
			what = "check " + string(r.Check)
		}
		rl.add(rl.at(k), ErrUnknownKey, "unknown key %q for %s", k, what)
	}
}

// params reads the check's parameters, each by its kind.
func (rl *ruleLoad) params() {
	r := rl.r
	for _, p := range rl.spec.params {
		v, ok := rl.t[p.key]
		if !ok {
			if p.required {
				rl.add(rl.headerPos(), ErrMissingParam, "check %s needs %s (%s)", r.Check, p.key, p.kind)
			}
			continue
		}
		kp := rl.at(p.key)
		switch p.kind {
		case kindNumber:
			rl.numberParam(p.key, v, kp)
		case kindBool:
			b, ok := v.(bool)
			if !ok {
				rl.add(kp, ErrParamType, "%s must be true or false, got %s", p.key, tomlType(v))
				continue
			}
			r.AllowAmbiguous = b
		case kindField:
			rl.fieldParam(p.key, v, kp)
		case kindFieldList:
			if list, ok := v.([]any); ok && len(list) == 0 {
				rl.add(kp, ErrBadValue, "%s is empty", p.key)
			}
			r.Fields = append(r.Fields, rl.fieldList(v, kp, r.ID, p.key)...)
		case kindCatalog:
			rl.catalogParam(v, kp)
		}
	}
	if r.Check == MatchQuality && math.IsNaN(r.MinProb) && math.IsNaN(r.MaxSepArcsec) && r.AllowAmbiguous {
		rl.add(rl.headerPos(), ErrMissingParam, "match check tests nothing: give min_prob, max_sep_arcsec, or leave allow_ambiguous false")
	}
}

func (rl *ruleLoad) numberParam(key string, v any, kp tomlpos.Pos) {
	r := rl.r
	x, ok := number(v)
	if !ok {
		rl.add(kp, ErrParamType, "%s must be a number, got %s", key, tomlType(v))
		return
	}
	if math.IsNaN(x) || math.IsInf(x, 0) {
		rl.add(kp, ErrBadValue, "%s must be finite", key)
		return
	}
	switch key {
	case "limit":
		r.Limit = x
	case "min_prob":
		if x < 0 || x > 1 {
			rl.add(kp, ErrBadValue, "min_prob %v outside [0, 1]", x)
		}
		r.MinProb = x
	case "max_sep_arcsec":
		if x < 0 {
			rl.add(kp, ErrBadValue, "max_sep_arcsec %v is negative", x)
		}
		r.MaxSepArcsec = x
	}
}

func (rl *ruleLoad) fieldParam(key string, v any, kp tomlpos.Pos) {
	s, ok := v.(string)
	if !ok {
		rl.add(kp, ErrParamType, "%s must be a field name string, got %s", key, tomlType(v))
		return
	}
	f, ok := fieldByName[s]
	if !ok {
		rl.add(kp, ErrUnknownField, "unknown field %q%s", s, retired.Hint(s))
		return
	}
	rl.r.Field = f
}

// catalogParam resolves a match rule's catalog to indices into the
// schema's catalogs.
func (rl *ruleLoad) catalogParam(v any, kp tomlpos.Pos) {
	r := rl.r
	s, ok := v.(string)
	if !ok {
		rl.add(kp, ErrParamType, "catalog must be a string, got %s", tomlType(v))
		return
	}
	r.Catalog = s
	if s == AllCatalogs {
		r.CatalogIdx = make([]int, len(rl.schema.Catalogs))
		for i := range r.CatalogIdx {
			r.CatalogIdx[i] = i
		}
		return
	}
	idx := -1
	for i, c := range rl.schema.Catalogs {
		if c == s {
			idx = i
		}
	}
	if idx < 0 {
		rl.add(kp, ErrUnknownCatalog, "unknown catalog %q (secondary catalogs: %s)", s, listOrNone(rl.schema.Catalogs))
		return
	}
	r.CatalogIdx = []int{idx}
}

// voidsAndWhen reads the optional voids list and precondition, and reports
// an empty expression (left until now to keep the reporting order).
func (rl *ruleLoad) voidsAndWhen() {
	r, t := rl.r, rl.t
	if v, ok := t["voids"]; ok {
		r.Voids = rl.fieldList(v, rl.at("voids"), r.ID, "voids")
	}
	if _, ok := t["when"]; ok {
		if w := rl.str("when", false); w != "" {
			r.When = rl.compile(w, "when")
		} else if _, isStr := t["when"].(string); isStr {
			rl.add(rl.at("when"), ErrExpr, "when is empty")
		}
	}
	if rl.hasExpr && rl.exprSrc == "" {
		if _, isStr := t["expr"].(string); isStr {
			rl.add(rl.at("expr"), ErrExpr, "expr is empty")
		}
	}
}

// fieldList reads a list of canonical field names, reporting problems at p.
func (l *loader) fieldList(v any, p tomlpos.Pos, id, key string) []catalog.Field {
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

// compile compiles the expression under key, reporting a failure at the
// key with the column inside the expression.
func (rl *ruleLoad) compile(src, key string) *Expr {
	e, fe, err := rl.env.compile(src)
	if err == nil {
		return e
	}
	msg := err.Error()
	if old, col, ok := retiredName(src); ok {
		msg = fmt.Sprintf("%s: unknown name %s%s (at column %d of the expression)", key, old, retired.Hint(old), col)
	} else if fe != nil {
		msg = fmt.Sprintf("%s: %s (at column %d of the expression)", key, fe.Message, fe.Column+1)
	} else {
		msg = key + ": " + msg
	}
	rl.add(rl.at(key), ErrExpr, "%s", msg)
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
		return ">= " + numfmt.Exact(r.Limit) + " sigma"
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
			parts = append(parts, "prob >= "+numfmt.Exact(r.MinProb))
		}
		if !math.IsNaN(r.MaxSepArcsec) {
			parts = append(parts, "sep <= "+numfmt.Exact(r.MaxSepArcsec)+" arcsec")
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
	s := op + numfmt.Exact(r.Limit)
	if r.Field >= 0 {
		if u := catalog.Fields[r.Field].Unit; u != "" {
			s += " " + u
		}
	}
	return s
}
