package rules

import (
	"errors"
	"math"
	"regexp"
	"sort"
	"starvet/internal/retired"

	"github.com/expr-lang/expr"
	"github.com/expr-lang/expr/ast"
	"github.com/expr-lang/expr/file"
	"github.com/expr-lang/expr/parser"
	"github.com/expr-lang/expr/vm"

	"starvet/catalog"
)

// VarKind says where the value of an expression variable comes from.
type VarKind int

const (
	VarField                VarKind = iota // a canonical field, float64, NaN when missing
	VarParallaxSignificance                // (parallax - zero point)/parallax_err, float64
	VarPMTotal                             // hypot(pm_ra, pm_dec), mas/yr, float64
	VarDupCount                            // duplicates found by the self-match, float64
	VarMatchProb                           // <catalog>_match_prob, float64, NaN when unmatched
	VarSepArcsec                           // <catalog>_sep_arcsec, float64, NaN when unmatched
	VarCandidates                          // <catalog>_candidates, float64
	VarAmbiguous                           // <catalog>_ambiguous, bool
	VarMatched                             // <catalog>_matched, bool
)

// Var is one variable an expression reads.
type Var struct {
	Name    string
	Kind    VarKind
	Field   catalog.Field // for VarField
	Catalog int           // index into Schema.Catalogs for the per-catalog kinds
	// NaNOK is true when the expression handles missing values itself (it
	// calls is_missing). UnmatchedOK is true for C_match_prob and
	// C_sep_arcsec when the expression reads C_matched, so it handles the
	// no-counterpart case itself. Otherwise a NaN value means the
	// expression cannot be decided and the rule is skipped.
	NaNOK, UnmatchedOK bool
}

// IsBool reports whether the variable is a bool (else float64).
func (v Var) IsBool() bool { return v.Kind == VarAmbiguous || v.Kind == VarMatched }

// Expr is a compiled boolean expression.
type Expr struct {
	Source        string
	prog          *vm.Program
	vars          []Var
	usesIsMissing bool
	canonical     string
	simple        simpleTest
}

// simpleTest is set when the whole expression is is_missing(f) or
// !is_missing(f) for a canonical field f, so evaluators can skip the VM.
type simpleTest struct {
	ok      bool
	field   catalog.Field
	negated bool
}

// MissingTest reports whether the expression is exactly is_missing(f)
// (negated false) or !is_missing(f) (negated true) for a field f.
func (e *Expr) MissingTest() (f catalog.Field, negated, ok bool) {
	return e.simple.field, e.simple.negated, e.simple.ok
}

func findSimple(n ast.Node, vars map[string]Var) simpleTest {
	neg := false
	if u, ok := n.(*ast.UnaryNode); ok && (u.Operator == "!" || u.Operator == "not") {
		neg, n = true, u.Node
	}
	c, ok := n.(*ast.CallNode)
	if !ok || len(c.Arguments) != 1 {
		return simpleTest{}
	}
	if id, ok := c.Callee.(*ast.IdentifierNode); !ok || id.Value != IsMissingName {
		return simpleTest{}
	}
	arg, ok := c.Arguments[0].(*ast.IdentifierNode)
	if !ok {
		return simpleTest{}
	}
	v, ok := vars[arg.Value]
	if !ok || v.Kind != VarField {
		return simpleTest{}
	}
	return simpleTest{ok: true, field: v.Field, negated: neg}
}

// Program is the compiled program; run it with a map holding Vars().
func (e *Expr) Program() *vm.Program { return e.prog }

// Vars lists the variables the expression reads, sorted by name.
func (e *Expr) Vars() []Var { return e.vars }

// UsesIsMissing reports whether the expression calls is_missing. See
// Var.NaNOK for what evaluators do with NaN inputs.
func (e *Expr) UsesIsMissing() bool { return e.usesIsMissing }

var matchSuffixes = []struct {
	suffix string
	kind   VarKind
}{
	{"_match_prob", VarMatchProb},
	{"_sep_arcsec", VarSepArcsec},
	{"_candidates", VarCandidates},
	{"_ambiguous", VarAmbiguous},
	{"_matched", VarMatched},
}

// matchVarRe finds per-catalog variable names, for the permissive schema.
var matchVarRe = regexp.MustCompile(`\b([A-Za-z_][A-Za-z0-9_]*?)_(match_prob|sep_arcsec|candidates|ambiguous|matched)\b`)

// VarPrefix is the expression prefix of a catalog's variables: the name with
// every character other than a letter, digit or underscore replaced by "_".
func VarPrefix(catalogName string) string {
	b := []byte(catalogName)
	for i, c := range b {
		if !(c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || c == '_') {
			b[i] = '_'
		}
	}
	return string(b)
}

// exprEnv is the typed environment for the checker plus the variable table.
type exprEnv struct {
	types map[string]any
	vars  map[string]Var
}

func newExprEnv(catalogs []string) *exprEnv {
	e := &exprEnv{types: map[string]any{IsMissingName: IsMissing}, vars: map[string]Var{}}
	add := func(v Var) {
		if v.IsBool() {
			e.types[v.Name] = false
		} else {
			e.types[v.Name] = 0.0
		}
		e.vars[v.Name] = v
	}
	for f := catalog.Field(0); f < catalog.NumFields; f++ {
		if f != catalog.ID {
			add(Var{Name: catalog.Fields[f].Name, Kind: VarField, Field: f})
		}
	}
	add(Var{Name: "parallax_significance", Kind: VarParallaxSignificance})
	add(Var{Name: "pm_total", Kind: VarPMTotal})
	add(Var{Name: "dup_count", Kind: VarDupCount})
	for i, c := range catalogs {
		p := VarPrefix(c)
		for _, s := range matchSuffixes {
			add(Var{Name: p + s.suffix, Kind: s.kind, Catalog: i})
		}
	}
	return e
}

// IsMissing is the is_missing function of the expression environment. It
// lives in the environment (not as an expr.Function) so that the VM calls it
// through its typed fast path without boxing arguments; evaluators put it in
// their environment map under IsMissingName.
func IsMissing(x float64) bool { return math.IsNaN(x) }

// IsMissingName is the expression name of IsMissing.
const IsMissingName = "is_missing"

// compile type-checks src against the environment; it must yield a bool.
func (e *exprEnv) compile(src string) (*Expr, *file.Error, error) {
	prog, err := expr.Compile(src, expr.Env(e.types), expr.AsBool())
	if err != nil {
		var fe *file.Error
		if errors.As(err, &fe) {
			return nil, fe, err
		}
		return nil, nil, err
	}
	out := &Expr{Source: src, prog: prog}
	c := &collector{env: e, seen: map[string]bool{}}
	// Walk the unoptimised tree so folded-away names still count.
	tree, perr := parser.Parse(src)
	if perr != nil {
		return nil, nil, perr
	}
	ast.Walk(&tree.Node, c)
	out.vars = c.vars
	guarded := map[int]bool{}
	for _, v := range out.vars {
		if v.Kind == VarMatched {
			guarded[v.Catalog] = true
		}
	}
	for i := range out.vars {
		v := &out.vars[i]
		v.NaNOK = c.isMissing
		v.UnmatchedOK = (v.Kind == VarMatchProb || v.Kind == VarSepArcsec) && guarded[v.Catalog]
	}
	sort.Slice(out.vars, func(i, j int) bool { return out.vars[i].Name < out.vars[j].Name })
	out.usesIsMissing = c.isMissing
	out.canonical = tree.Node.String()
	out.simple = findSimple(tree.Node, e.vars)
	return out, nil, nil
}

type collector struct {
	env       *exprEnv
	seen      map[string]bool
	vars      []Var
	isMissing bool
}

func (c *collector) Visit(n *ast.Node) {
	switch x := (*n).(type) {
	case *ast.IdentifierNode:
		if v, ok := c.env.vars[x.Value]; ok && !c.seen[x.Value] {
			c.seen[x.Value] = true
			c.vars = append(c.vars, v)
		}
	case *ast.CallNode:
		if id, ok := x.Callee.(*ast.IdentifierNode); ok && id.Value == IsMissingName {
			c.isMissing = true
		}
	}
}

// retiredName finds the first retired variable name in src and its 1-based
// column, so that an old rule file's error names the new word.
func retiredName(src string) (name string, col int, ok bool) {
	tree, err := parser.Parse(src)
	if err != nil {
		return "", 0, false
	}
	f := &retiredFinder{}
	ast.Walk(&tree.Node, f)
	return f.name, f.col, f.name != ""
}

type retiredFinder struct {
	name string
	col  int
}

func (f *retiredFinder) Visit(n *ast.Node) {
	id, isIdent := (*n).(*ast.IdentifierNode)
	if !isIdent || f.name != "" {
		return
	}
	if _, old := retired.Successor(id.Value); old {
		f.name, f.col = id.Value, id.Location().From+1
	}
}
