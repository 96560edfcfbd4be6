package quality

import (
	"context"
	"math"
	"starvet/internal/numfmt"
	"strconv"

	"github.com/expr-lang/expr/vm"

	"starvet/catalog"
	"starvet/internal/parallel"
	"starvet/rules"
)

// Star qualities and rule results.
const (
	Pass   = "pass"
	Flag   = "flag"
	Reject = "reject"

	ResultPass    = "pass"
	ResultFail    = "fail"
	ResultSkipped = "skipped"
)

// MatchInfo is a star's best counterpart in one secondary catalog.
type MatchInfo struct {
	Matched    bool
	SepArcsec  float64
	Prob       float64 // posterior match probability
	Candidates int
	Ambiguous  bool
}

// Star is what the rules see of one primary source.
type Star struct {
	ID       string
	Values   [catalog.NumFields]float64 // merged canonical values, NaN when missing
	Matches  []MatchInfo                // in RuleSet.Catalogs order; a short slice means unmatched
	DupCount int                        // other primary sources the self-match paired with this one
}

// Context carries campaign settings a rule set needs at evaluation.
type Context struct {
	// ParallaxZeroPointMas is subtracted from every parallax before its
	// significance is computed: (parallax - zero point)/parallax_err.
	ParallaxZeroPointMas float64
}

// Outcome is one rule's verdict on one star.
type Outcome struct {
	RuleID    string
	Severity  string // reject | flag
	Result    string // pass | fail | skipped
	Value     float64
	Threshold string
	Message   string
}

// Assessment is a star's verdict. Reuse one per goroutine with Assess to
// avoid allocation; Outcomes, FailedRules and the message text are
// overwritten by the next call.
type Assessment struct {
	Quality     string
	Outcomes    []Outcome // in RuleSet.Rules order (sorted by rule id)
	FailedRules []string  // ids of failed rules, in the same order
	buf         []byte
	spans       []int
	scratch     *scratch
}

func newScratch() *scratch {
	return &scratch{env: map[string]any{rules.IsMissingName: rules.IsMissing}}
}

type scratch struct {
	env map[string]any
	vm  vm.VM
}

// Evaluator applies one rule set; it is read-only after construction and
// safe for concurrent use.
type Evaluator struct {
	rs         *rules.RuleSet
	ctx        Context
	thresholds []string
	texts      []ruleTexts
	hasExpr    bool
	// order is the evaluation order: built-in checks without a precondition
	// first, then rules that run an expression (cheap checks first).
	// Outcomes are stored in rule order whatever the evaluation order.
	order []int
}

// ruleTexts are a rule's fixed message parts, built once so that a passing
// or routinely skipped rule costs no formatting and no allocation.
type ruleTexts struct {
	limit, minProb, maxSep string
	pass                   string // message of a pass
	skipField              string // "skipped: <field> missing"
	whenFalse              string
	exprFalse              string
}

// NewEvaluator prepares rs for evaluation.
func NewEvaluator(rs *rules.RuleSet, ctx Context) *Evaluator {
	e := &Evaluator{rs: rs, ctx: ctx, thresholds: make([]string, len(rs.Rules)), texts: make([]ruleTexts, len(rs.Rules))}
	var later []int
	for i, r := range rs.Rules {
		if r.Expr != nil || r.When != nil {
			later = append(later, i)
		} else {
			e.order = append(e.order, i)
		}
	}
	e.order = append(e.order, later...)
	for i, r := range rs.Rules {
		e.thresholds[i] = r.Threshold()
		t := ruleTexts{limit: numfmt.Exact(r.Limit), minProb: numfmt.Exact(r.MinProb), maxSep: numfmt.Exact(r.MaxSepArcsec)}
		op := " >= "
		if r.Dir == rules.Max {
			op = " <= "
		}
		switch {
		case r.Expr != nil:
			t.pass = "true: " + r.Expr.Source
			t.exprFalse = "false: " + r.Expr.Source
		case r.Check == rules.ParallaxSignificance:
			t.pass = "parallax_significance" + op + t.limit
		case r.Check == rules.MatchQuality:
			t.pass = "every counterpart tested: " + e.thresholds[i]
		case r.Check == rules.RequiredFields:
			t.pass = "all present"
		case r.Field >= 0 && r.Dir != rules.NoLimit:
			t.pass = catalog.Fields[r.Field].Name + op + t.limit
			t.skipField = "skipped: " + catalog.Fields[r.Field].Name + " missing"
		}
		if r.When != nil {
			t.whenFalse = "skipped: precondition " + r.When.Source + " is false"
			e.hasExpr = true
		}
		if r.Expr != nil {
			e.hasExpr = true
		}
		e.texts[i] = t
	}
	return e
}

// RuleSet returns the evaluator's rule set.
func (e *Evaluator) RuleSet() *rules.RuleSet { return e.rs }

// Assess evaluates every rule on s into out. It runs once per star, a
// million times a run: it stays one loop so the buffer, spans and reused
// stores stay in one place with no extra call or allocation per rule.
func (e *Evaluator) Assess(s *Star, out *Assessment) {
	n := len(e.rs.Rules)
	if cap(out.Outcomes) < n {
		out.Outcomes = make([]Outcome, n)
	}
	out.Outcomes = out.Outcomes[:n]
	out.FailedRules = out.FailedRules[:0]
	out.buf = out.buf[:0]
	if e.hasExpr && out.scratch == nil {
		out.scratch = newScratch()
	}
	// Fixed messages are assigned as they are; the others are written into
	// one buffer and cut out of one string, so a star costs at most one
	// allocation for all its messages.
	spans := out.spans[:0]
	for range n {
		spans = append(spans, -1, -1)
	}
	worst := 0 // 0 pass, 1 flag, 2 reject
	for _, i := range e.order {
		r := e.rs.Rules[i]
		o := &out.Outcomes[i]
		// A reused Assessment usually holds these already; skipping the
		// stores saves GC write barriers.
		if o.RuleID != r.ID || o.Threshold != e.thresholds[i] || o.Severity != string(r.Severity) {
			o.RuleID = r.ID
			o.Severity = string(r.Severity)
			o.Threshold = e.thresholds[i]
		}
		o.Value = math.NaN()
		start := len(out.buf)
		res, msg := e.eval(r, &e.texts[i], s, o, out)
		if o.Result != res {
			o.Result = res
		}
		if msg != "" {
			out.buf = out.buf[:start]
			if o.Message != msg {
				o.Message = msg
			}
		} else {
			spans[2*i], spans[2*i+1] = start, len(out.buf)
		}
		if res == ResultFail {
			if r.Severity == rules.Reject {
				worst = 2
			} else if worst < 1 {
				worst = 1
			}
		}
	}
	for i := range out.Outcomes {
		if out.Outcomes[i].Result == ResultFail {
			out.FailedRules = append(out.FailedRules, e.rs.Rules[i].ID)
		}
	}
	out.spans = spans
	if len(out.buf) > 0 {
		text := string(out.buf)
		for i := range out.Outcomes {
			if spans[2*i] >= 0 {
				out.Outcomes[i].Message = text[spans[2*i]:spans[2*i+1]]
			}
		}
	}
	out.Quality = [...]string{Pass, Flag, Reject}[worst]
}

// AssessAll assesses stars on workers goroutines (parallel.Workers: <= 0
// means GOMAXPROCS), in batches. It checks ctx between batches; when ctx
// is done it stops after the batches already started, and the entries it
// did not reach have an empty Quality, so callers check ctx.Err().
func (e *Evaluator) AssessAll(ctx context.Context, stars []Star, workers int) []Assessment {
	out := make([]Assessment, len(stars))
	n := len(e.rs.Rules)
	backing := make([]Outcome, n*len(stars))
	for i := range out {
		out[i].Outcomes = backing[i*n : i*n : (i+1)*n]
	}
	_ = parallel.Batches(ctx, len(stars), batch, workers, func(w *Assessment, lo, hi int) {
		// Borrow the worker's scratch space so results keep none of it.
		if e.hasExpr && w.scratch == nil {
			w.scratch = newScratch()
		}
		for i := lo; i < hi; i++ {
			o := &out[i]
			o.scratch, o.buf, o.spans = w.scratch, w.buf, w.spans
			e.Assess(&stars[i], o)
			w.buf, w.spans = o.buf, o.spans
			o.scratch, o.buf, o.spans = nil, nil, nil
		}
	}, nil)
	return out
}

// Each assesses stars on workers goroutines as AssessAll does and hands
// each result to fn, which may be called concurrently. The Assessment is
// reused for the next star: fn may keep its strings but must copy the
// slices it wants to keep. It returns ctx.Err() if it stopped early.
func (e *Evaluator) Each(ctx context.Context, stars []Star, workers int, fn func(i int, a *Assessment)) error {
	return parallel.Batches(ctx, len(stars), batch, workers, func(a *Assessment, lo, hi int) {
		for i := lo; i < hi; i++ {
			e.Assess(&stars[i], a)
			fn(i, a)
		}
	}, nil)
}

// batch is how many stars a worker assesses between checks of the context.
const batch = 2048

// eval returns the result and either a fixed message or "" when it wrote
// the message into a.buf. It is the per-rule dispatch of the per-star hot
// loop; one switch keeps it free of indirect calls.
func (e *Evaluator) eval(r *rules.Rule, t *ruleTexts, s *Star, o *Outcome, a *Assessment) (string, string) {
	if r.When != nil {
		ok, missing := e.run(r.When, s, a)
		if missing != "" {
			a.buf = append(a.buf, "skipped: precondition needs "...)
			a.buf = append(a.buf, missing...)
			a.buf = append(a.buf, ", which is missing"...)
			return ResultSkipped, ""
		}
		if !ok {
			return ResultSkipped, t.whenFalse
		}
	}
	if r.Expr != nil {
		ok, missing := e.run(r.Expr, s, a)
		switch {
		case missing != "":
			a.buf = append(a.buf, "skipped: "...)
			a.buf = append(a.buf, missing...)
			a.buf = append(a.buf, " missing"...)
			return ResultSkipped, ""
		case ok:
			return ResultPass, t.pass
		default:
			return ResultFail, t.exprFalse
		}
	}
	switch r.Check {
	case rules.ParallaxSignificance:
		p, pe := s.Values[catalog.Parallax], s.Values[catalog.ParallaxErr]
		switch {
		case math.IsNaN(p):
			return ResultSkipped, "skipped: parallax missing"
		case math.IsNaN(pe):
			return ResultSkipped, "skipped: parallax_err missing"
		case !(pe > 0):
			return ResultSkipped, "skipped: parallax_err is not positive"
		}
		return compare(a, o, "parallax_significance", (p-e.ctx.ParallaxZeroPointMas)/pe, r, t)
	case rules.Duplicate:
		return duplicate(s, o, a)
	case rules.MatchQuality:
		return e.match(r, t, s, o, a)
	case rules.RequiredFields:
		missing := 0
		for _, f := range r.Fields {
			if math.IsNaN(s.Values[f]) {
				if missing == 0 {
					a.buf = append(a.buf, "missing: "...)
				} else {
					a.buf = append(a.buf, ", "...)
				}
				a.buf = append(a.buf, catalog.Fields[f].Name...)
				missing++
			}
		}
		o.Value = float64(missing)
		if missing > 0 {
			return ResultFail, ""
		}
		return ResultPass, t.pass
	}
	v := s.Values[r.Field]
	if math.IsNaN(v) {
		return ResultSkipped, t.skipField
	}
	return compare(a, o, catalog.Fields[r.Field].Name, v, r, t)
}

// compare tests v against the rule's limit. A pass gets the fixed message
// ("fit_residual <= 1.4", the value is in Value); a fail is written out,
// e.g. "fit_residual 2.31 > 1.4".
func compare(a *Assessment, o *Outcome, name string, v float64, r *rules.Rule, t *ruleTexts) (string, string) {
	o.Value = v
	pass, bad := v >= r.Limit, " < "
	if r.Dir == rules.Max {
		pass, bad = v <= r.Limit, " > "
	}
	if pass {
		return ResultPass, t.pass
	}
	a.buf = append(a.buf, name...)
	a.buf = append(a.buf, ' ')
	a.buf = numfmt.AppendAgainst(a.buf, v, r.Limit)
	a.buf = append(a.buf, bad...)
	a.buf = append(a.buf, t.limit...)
	return ResultFail, ""
}

// duplicate fails on the catalog's own flag (== 1) or on any self-match
// duplicate. The self-match count is always known, so a missing catalog
// flag alone does not skip the rule; the message says it was missing.
func duplicate(s *Star, o *Outcome, a *Assessment) (string, string) {
	flag := s.Values[catalog.DuplicateFlag]
	o.Value = float64(s.DupCount)
	if s.DupCount == 0 {
		switch {
		case flag == 0:
			return ResultPass, "duplicate_flag 0, dup_count 0"
		case math.IsNaN(flag):
			return ResultPass, "duplicate_flag missing, dup_count 0"
		}
	}
	if math.IsNaN(flag) {
		a.buf = append(a.buf, "duplicate_flag missing, "...)
	} else {
		a.buf = append(a.buf, "duplicate_flag "...)
		a.buf = append(a.buf, numfmt.Exact(flag)...)
		a.buf = append(a.buf, ", "...)
	}
	a.buf = append(a.buf, "dup_count "...)
	a.buf = strconv.AppendInt(a.buf, int64(s.DupCount), 10)
	if flag == 1 || s.DupCount > 0 {
		return ResultFail, ""
	}
	return ResultPass, ""
}

// matchVerdict tests one counterpart: bad when a known value fails or it
// is ambiguous, miss when a needed value is NaN.
func matchVerdict(r *rules.Rule, m *MatchInfo) (bad, miss bool) {
	if !math.IsNaN(r.MinProb) {
		if math.IsNaN(m.Prob) {
			miss = true
		} else if m.Prob < r.MinProb {
			bad = true
		}
	}
	if !math.IsNaN(r.MaxSepArcsec) {
		if math.IsNaN(m.SepArcsec) {
			miss = true
		} else if m.SepArcsec > r.MaxSepArcsec {
			bad = true
		}
	}
	if m.Ambiguous && !r.AllowAmbiguous {
		bad = true
	}
	return bad, miss
}

// match tests every counterpart the star has in the rule's catalogs. A
// catalog without a counterpart is not tested; the rule is skipped when
// none was tested, fails when any counterpart fails, and is skipped when a
// counterpart lacks a needed value and none failed. Value is the lowest
// posterior among the counterparts tested. Unless it passes, the message
// lists every counterpart tested. Per star and rule on the hot path, it
// stays whole: counting and message share the loop's skip test and a.buf.
func (e *Evaluator) match(r *rules.Rule, t *ruleTexts, s *Star, o *Outcome, a *Assessment) (string, string) {
	tested, failed, unknown := 0, 0, 0
	lowest := math.NaN()
	for _, ci := range r.CatalogIdx {
		if ci >= len(s.Matches) || !s.Matches[ci].Matched {
			continue
		}
		m := &s.Matches[ci]
		tested++
		if !(m.Prob >= lowest) {
			lowest = m.Prob
		}
		bad, miss := matchVerdict(r, m)
		switch {
		case bad:
			failed++
		case miss:
			unknown++
		}
	}
	o.Value = lowest
	switch {
	case tested == 0:
		return ResultSkipped, "skipped: no counterpart"
	case failed == 0 && unknown == 0:
		return ResultPass, t.pass
	}
	n := 0
	for _, ci := range r.CatalogIdx {
		if ci >= len(s.Matches) || !s.Matches[ci].Matched {
			continue
		}
		m := &s.Matches[ci]
		if n > 0 {
			a.buf = append(a.buf, "; "...)
		}
		n++
		a.buf = append(a.buf, e.rs.Catalogs[ci]...)
		a.buf = append(a.buf, ": "...)
		sep := false
		if !math.IsNaN(r.MinProb) {
			a.buf = append(a.buf, "prob "...)
			switch {
			case math.IsNaN(m.Prob):
				a.buf = append(a.buf, "missing"...)
			case m.Prob < r.MinProb:
				a.buf = numfmt.AppendAgainst(a.buf, m.Prob, r.MinProb)
				a.buf = append(a.buf, " < "...)
				a.buf = append(a.buf, t.minProb...)
			default:
				a.buf = numfmt.AppendAgainst(a.buf, m.Prob, r.MinProb)
			}
			sep = true
		}
		if !math.IsNaN(r.MaxSepArcsec) {
			if sep {
				a.buf = append(a.buf, ", "...)
			}
			a.buf = append(a.buf, "sep "...)
			switch {
			case math.IsNaN(m.SepArcsec):
				a.buf = append(a.buf, "missing"...)
			case m.SepArcsec > r.MaxSepArcsec:
				a.buf = numfmt.AppendAgainst(a.buf, m.SepArcsec, r.MaxSepArcsec)
				a.buf = append(a.buf, " > "...)
				a.buf = append(a.buf, t.maxSep...)
			default:
				a.buf = numfmt.AppendAgainst(a.buf, m.SepArcsec, r.MaxSepArcsec)
			}
			a.buf = append(a.buf, " arcsec"...)
			sep = true
		}
		if !r.AllowAmbiguous {
			if sep {
				a.buf = append(a.buf, ", "...)
			}
			if m.Ambiguous {
				a.buf = append(a.buf, "ambiguous ("...)
				a.buf = strconv.AppendInt(a.buf, int64(m.Candidates), 10)
				a.buf = append(a.buf, " candidates)"...)
			} else {
				a.buf = append(a.buf, "unambiguous"...)
			}
		}
	}
	if failed > 0 {
		return ResultFail, ""
	}
	a.buf = append(a.buf, " (skipped: a value is missing)"...)
	return ResultSkipped, ""
}

// run evaluates a compiled expression. When a float input is NaN and the
// expression does not handle that (rules.Var.NaNOK), it is not run and the
// input's name is returned instead, so a NaN comparison never decides.
func (e *Evaluator) run(x *rules.Expr, s *Star, a *Assessment) (bool, string) {
	if f, neg, ok := x.MissingTest(); ok {
		return math.IsNaN(s.Values[f]) != neg, ""
	}
	env := a.scratch.env
	for _, v := range x.Vars() {
		var val any
		switch v.Kind {
		case rules.VarField:
			f := s.Values[v.Field]
			if math.IsNaN(f) && !v.NaNOK {
				return false, v.Name
			}
			val = f
		case rules.VarMatched, rules.VarAmbiguous:
			m := matchOf(s, v.Catalog)
			if v.Kind == rules.VarMatched {
				val = m.Matched
			} else {
				val = m.Matched && m.Ambiguous
			}
		default:
			f := e.derived(v, s)
			if math.IsNaN(f) && !v.NaNOK && !(v.UnmatchedOK && !matchOf(s, v.Catalog).Matched) {
				return false, v.Name
			}
			val = f
		}
		env[v.Name] = val
	}
	res, err := a.scratch.vm.Run(x.Program(), env)
	if err != nil {
		// Type-checked at load, so this is a programmer error.
		panic("quality: expression " + strconv.Quote(x.Source) + ": " + err.Error())
	}
	return res.(bool), ""
}

func matchOf(s *Star, ci int) MatchInfo {
	if ci < len(s.Matches) {
		return s.Matches[ci]
	}
	return MatchInfo{}
}

func (e *Evaluator) derived(v rules.Var, s *Star) float64 {
	switch v.Kind {
	case rules.VarParallaxSignificance:
		pe := s.Values[catalog.ParallaxErr]
		if !(pe > 0) {
			return math.NaN()
		}
		return (s.Values[catalog.Parallax] - e.ctx.ParallaxZeroPointMas) / pe
	case rules.VarPMTotal:
		return math.Hypot(s.Values[catalog.PMRA], s.Values[catalog.PMDec])
	case rules.VarDupCount:
		return float64(s.DupCount)
	case rules.VarMatchProb, rules.VarSepArcsec, rules.VarCandidates:
		m := matchOf(s, v.Catalog)
		if !m.Matched {
			if v.Kind == rules.VarCandidates {
				return 0
			}
			return math.NaN()
		}
		switch v.Kind {
		case rules.VarMatchProb:
			return m.Prob
		case rules.VarSepArcsec:
			return m.SepArcsec
		}
		return float64(m.Candidates)
	}
	panic("quality: unknown variable kind")
}
