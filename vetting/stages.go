package vetting

import (
	"context"
	"fmt"
	"path/filepath"
	"sync"

	"starvet/campaign"
	"starvet/catalog"
	"starvet/catalog/ingest"
	"starvet/crossmatch"
	"starvet/quality"
	"starvet/rules"
)

// Ingest reads every catalog of the campaign, all at once (one goroutine
// per file). Logs, rejected-row files (<catalog>.rejected.csv in
// rejectDir; "" writes none) and the first error follow the campaign's
// catalog order, as if they had been read one after another.
func (e *Engine) Ingest(ctx context.Context, c *campaign.Campaign, strict bool, rejectDir string) (*Catalogs, error) {
	type result struct {
		t   *catalog.Table
		rep *catalog.Report
		err error
	}
	res := make([]result, len(c.Catalogs))
	st := begin(e.Progress, fmt.Sprintf("ingest (%d catalogs at once)", len(c.Catalogs)), 0)
	var wg sync.WaitGroup
	for k, cs := range c.Catalogs {
		wg.Add(1)
		go func() {
			defer wg.Done()
			t, rep, err := ingest.Read(ctx, cs.Spec, catalog.ReadOptions{Strict: strict})
			res[k] = result{t, rep, err}
		}()
	}
	wg.Wait()
	st.End()
	out := &Catalogs{}
	for k, cs := range c.Catalogs {
		spec := cs.Spec
		t, rep, err := res[k].t, res[k].rep, res[k].err
		if err != nil {
			return nil, err
		}
		if t.EpochJyr == 0 {
			return nil, fmt.Errorf("%s: catalog %s: neither the campaign nor the file gives the epoch of the positions; set `epoch` in its [[catalog]]", spec.File, spec.Name)
		}
		e.Log.Info().Str("catalog", spec.Name).Int("rows_read", rep.RowsRead).Int("rows_kept", rep.RowsKept).
			Int("rows_quarantined", len(rep.Quarantined)).Msg("ingested")
		for _, w := range rep.Warnings {
			e.Log.Warn().Str("catalog", spec.Name).Msg(w)
		}
		if rejectDir != "" && len(rep.Quarantined) > 0 {
			p := filepath.Join(rejectDir, spec.Name+".rejected.csv")
			if err := catalog.WriteRejected(p, rep.Header, rep.Quarantined); err != nil {
				return nil, err
			}
		}
		if spec.Role == catalog.Astrometry {
			out.Primary = t
			out.Reports = append([]*catalog.Report{rep}, out.Reports...)
			out.Specs = append([]catalog.Spec{spec}, out.Specs...)
		} else {
			out.Secondaries = append(out.Secondaries, t)
			out.Reports = append(out.Reports, rep)
			out.Specs = append(out.Specs, spec)
		}
	}
	if out.Primary == nil {
		return nil, fmt.Errorf("campaign %s: no astrometry catalog", c.File)
	}
	return out, nil
}

// Match cross-matches the primary with every secondary and self-matches the
// primary.
func (e *Engine) Match(ctx context.Context, c *campaign.Campaign, cats *Catalogs) (*Matched, error) {
	m := &Matched{}
	var primaryInner []bool
	if c.Tile != nil {
		m.Owned = ownedRows(c.Tile, cats.Primary)
		var err error
		if primaryInner, err = InnerRows(ctx, c.Tile, cats.Primary, e.Workers); err != nil {
			return nil, err
		}
	}
	for k, t := range cats.Secondaries {
		st := begin(e.Progress, "match "+t.Name, 0)
		opt := MatchOptions(c, cats, k, e.Workers)
		if c.Tile != nil {
			inner, err := InnerRows(ctx, c.Tile, t, e.Workers)
			if err != nil {
				return nil, err
			}
			opt.Prior = c.Tile.Prior[cats.Specs[k+1].Name]
			opt.Region = &crossmatch.Region{Owned: m.Owned, PrimaryInner: primaryInner, SecondaryInner: inner}
		}
		res, err := crossmatch.Match(ctx, cats.Primary, t, opt)
		st.End()
		if err != nil {
			return nil, fmt.Errorf("match %s with %s: %w", cats.Primary.Name, t.Name, err)
		}
		e.Log.Info().Str("catalog", t.Name).Int("matched", res.Stats.Matched).Int("ambiguous", res.Stats.Ambiguous).
			Float64("prior", res.Prior).Msg("matched")
		m.Results = append(m.Results, res)
	}
	dup, err := crossmatch.SelfMatch(ctx, cats.Primary, c.Match.DuplicateRadiusArcsec, e.Workers)
	if err != nil {
		return nil, fmt.Errorf("self-match %s: %w", cats.Primary.Name, err)
	}
	m.DupCount = dup
	return m, nil
}

// MatchOptions are the cross-match options for the primary and secondary
// k (0-based) of cats under campaign c.
func MatchOptions(c *campaign.Campaign, cats *Catalogs, k, workers int) crossmatch.Options {
	return crossmatch.Options{
		RadiusArcsec:       c.Match.RadiusArcsec,
		NSigma:             c.Match.NSigma,
		RadiusFloorArcsec:  c.Match.RadiusFloorArcsec,
		AmbiguityRatio:     c.Match.AmbiguityRatio,
		PrimaryPosErrMas:   cats.Specs[0].PositionErrMas,
		SecondaryPosErrMas: cats.Specs[k+1].PositionErrMas,
		Workers:            workers,
	}
}

// LoadRules loads the campaign's rule set (or override, when not empty)
// against the campaign's secondary catalog names.
func LoadRules(c *campaign.Campaign, override string) (*rules.RuleSet, error) {
	var names []string
	for _, cs := range c.Catalogs {
		if cs.Role != catalog.Astrometry {
			names = append(names, cs.Name)
		}
	}
	schema := rules.Schema{Catalogs: names}
	src := c.Rules
	if override != "" {
		src = override
	}
	if src == "" || src == "default" {
		return rules.Default(schema)
	}
	return rules.Load(src, schema)
}

// Assess evaluates the given stars against the rule set.
func (e *Engine) Assess(ctx context.Context, c *campaign.Campaign, rs *rules.RuleSet, stars []quality.Star) ([]quality.Assessment, error) {
	ev := quality.NewEvaluator(rs, quality.Context{ParallaxZeroPointMas: c.ParallaxZeroPointMas})
	as := ev.AssessAll(ctx, stars, e.Workers)
	return as, ctx.Err()
}

// AssessCatalogs merges every primary star with its counterparts and
// evaluates it against the rule set.
func (e *Engine) AssessCatalogs(ctx context.Context, c *campaign.Campaign, rs *rules.RuleSet, cats *Catalogs, m *Matched) ([]quality.Assessment, error) {
	stars, _, err := mergeAll(ctx, cats, m, e.Workers)
	if err != nil {
		return nil, err
	}
	return e.Assess(ctx, c, rs, stars)
}
