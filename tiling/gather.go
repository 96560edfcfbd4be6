package tiling

import (
	"container/heap"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"starvet/campaign"
	"starvet/db"
	"starvet/verdict"
	"starvet/vetting"
)

// ErrIncomplete marks a set of tile ledgers that cannot be gathered.
var ErrIncomplete = errors.New("the tiles cannot be gathered")

// GatherOptions tune Gather.
type GatherOptions struct {
	Ledger      string // the campaign ledger to append the gathered run to
	ToolVersion string
	LockWait    time.Duration
}

// GatherSummary is what a gather did.
type GatherSummary struct {
	RunID     int64
	PrevRunID int64
	Tiles     int
	Computed  int64 // stars copied (or withdrawn) in this run
	Carried   int64 // stars carried from the previous gathered run
	Counts    map[string]int64
	Elapsed   time.Duration
}

// source is where a star of the gathered run comes from: its entry idx
// in tile's set.
type source struct {
	id        string
	tile, idx int
	star      db.PrevStar
}

// Gather appends to opt.Ledger one run holding every star of the split in
// dir as its tiles' ledgers last computed it. A star the tile ledger
// computed in a run an earlier gather already took, unchanged, is carried
// forward; every other star's rows are copied as the tile wrote them. It
// refuses, listing every problem, a set with a tile never run, run from
// another campaign or on other shards, a directory under tiles/ that is
// not in the plan, or a star two tiles both hold.
func Gather(ctx context.Context, dir string, opt GatherOptions) (*GatherSummary, error) {
	t0 := time.Now()
	p, err := ReadPlan(dir)
	if err != nil {
		return nil, err
	}
	c, err := campaign.Load(p.Campaign)
	if err != nil {
		return nil, err
	}
	if h := c.Hash(); h != p.CampaignHash {
		return nil, fmt.Errorf("%s: campaign %s changed since the split (hash %.12s, split from %.12s): split again: %w", dir, p.Campaign, h, p.CampaignHash, ErrIncomplete)
	}
	states, err := States(ctx, dir, p)
	if err != nil {
		return nil, err
	}
	var problems []string
	for _, st := range states {
		if st.Problem != "" {
			problems = append(problems, "tile "+st.Tile.Name+": "+st.Problem)
		}
	}
	problems = append(problems, foreignTiles(dir, p)...)
	if len(problems) > 0 {
		return nil, problemList(dir, problems)
	}
	stars, sets, problems, err := tileStars(ctx, dir, p, states)
	if err != nil {
		return nil, err
	}
	if len(problems) > 0 {
		return nil, problemList(dir, problems)
	}
	info, err := vetting.RunInfo(c, opt.ToolVersion, "", allFull(states))
	if err != nil {
		return nil, err
	}
	info.Note = fmt.Sprintf("campaign %s, gathered from %d sky tiles in %s", c.File, len(p.Tiles), dir)
	l, err := db.Open(ctx, opt.Ledger, db.Options{LockWait: opt.LockWait})
	if err != nil {
		return nil, err
	}
	defer l.Close()
	prevRun, err := l.LastCompleteRun(ctx)
	if err != nil {
		return nil, err
	}
	prev := &db.PrevSet{}
	prevTiles := map[string]db.TileRun{}
	sum := &GatherSummary{Tiles: len(p.Tiles)}
	if prevRun != nil {
		sum.PrevRunID = prevRun.ID
		if prev, err = l.PreviousState(ctx, prevRun.ID); err != nil {
			return nil, err
		}
		if prevTiles, err = l.RunTiles(ctx, prevRun.ID); err != nil {
			return nil, err
		}
	}
	w, err := l.BeginRun(ctx, info)
	if err != nil {
		return nil, err
	}
	if err := gatherInto(ctx, w, dir, p, states, stars, sets, prev, prevTiles, sum); err != nil {
		_ = w.Fail(context.WithoutCancel(ctx), err)
		return nil, err
	}
	sum.RunID = w.ID()
	if sum.Counts, err = l.StatusCounts(ctx, sum.RunID); err != nil {
		return nil, err
	}
	sum.Elapsed = time.Since(t0)
	return sum, nil
}

// gatherInto writes the gathered run.
func gatherInto(ctx context.Context, w *db.RunWriter, dir string, p *Plan, states []TileState, stars []source,
	sets []*db.PrevSet, prev *db.PrevSet, prevTiles map[string]db.TileRun, sum *GatherSummary) error {
	for _, cr := range p.Catalogs {
		if err := w.AddCatalog(ctx, cr); err != nil {
			return err
		}
	}
	var q []db.QuarantineRow
	data, err := os.ReadFile(filepath.Join(dir, quarantineFile))
	if err != nil {
		return err
	}
	if err := json.Unmarshal(data, &q); err != nil {
		return fmt.Errorf("%s: %w", filepath.Join(dir, quarantineFile), err)
	}
	if err := w.AddQuarantine(ctx, q); err != nil {
		return err
	}
	primary := p.Catalogs[0]
	type group struct {
		tile int
		run  int64
	}
	copies := map[group][]string{}
	// copied[k][i]: tile k's set entry i is copied from the tile's last run.
	copied := make([][]bool, len(sets))
	for k, set := range sets {
		copied[k] = make([]bool, set.Len())
	}
	var withdrawn []db.StarRecord
	// Both lists are in star id order: walk them side by side.
	j := 0
	for _, s := range stars {
		for ; j < prev.Len() && prev.IDs[j] < s.id; j++ {
			// A star of the previous gathered run no tile holds any more.
			if was := prev.Stars[j]; was.Status == string(verdict.Withdrawn) {
				sum.Carried++
			} else {
				withdrawn = append(withdrawn, vetting.WithdrawnRecord(prev.IDs[j], primary.Name, primary.Release, sum.PrevRunID, was.Status))
			}
		}
		var was db.PrevStar
		inPrev := j < prev.Len() && prev.IDs[j] == s.id
		if inPrev {
			was = prev.Stars[j]
			j++
		}
		gathered := prevTiles[p.Tiles[s.tile].Name].TileRun
		if inPrev && was.Status == s.star.Status && was.InputHash == s.star.InputHash && s.star.ComputedInRun <= gathered {
			sum.Carried++
			continue
		}
		if s.star.Status == string(verdict.Withdrawn) {
			// Written as a single run writes it (naming the campaign's
			// previous run); a star the campaign ledger never had is
			// not a star of a single run either.
			if inPrev {
				withdrawn = append(withdrawn, vetting.WithdrawnRecord(s.id, primary.Name, primary.Release, sum.PrevRunID, was.Status))
			}
			continue
		}
		g := group{s.tile, s.star.ComputedInRun}
		if g.run == states[s.tile].Run.ID {
			copied[s.tile][s.idx] = true
		}
		copies[g] = append(copies[g], s.id)
	}
	for ; j < prev.Len(); j++ {
		if was := prev.Stars[j]; was.Status == string(verdict.Withdrawn) {
			sum.Carried++
		} else {
			withdrawn = append(withdrawn, vetting.WithdrawnRecord(prev.IDs[j], primary.Name, primary.Release, sum.PrevRunID, was.Status))
		}
	}
	// A tile's last run's stars are copied as "all it computed but these"
	// (few, or none); an earlier run's as a list.
	var sources []db.CopySource
	for k, st := range states {
		latest := st.Run.ID
		var except []string
		for i, id := range sets[k].IDs {
			if sets[k].Stars[i].ComputedInRun == latest && !copied[k][i] {
				except = append(except, id)
			}
		}
		if len(copies[group{k, latest}]) > 0 {
			sources = append(sources, db.CopySource{Path: st.Tile.LedgerPath(dir), Run: latest, IDs: except, Except: true})
		}
	}
	groups := make([]group, 0, len(copies))
	for g := range copies {
		if g.run != states[g.tile].Run.ID {
			groups = append(groups, g)
		}
	}
	slices.SortFunc(groups, func(a, b group) int {
		if a.tile != b.tile {
			return a.tile - b.tile
		}
		return int(a.run - b.run)
	})
	for _, g := range groups {
		sources = append(sources, db.CopySource{Path: p.Tiles[g.tile].LedgerPath(dir), Run: g.run, IDs: copies[g]})
	}
	n, err := w.CopyComputed(ctx, sources)
	if err != nil {
		return err
	}
	sum.Computed += n
	if len(withdrawn) > 0 {
		if err := w.AddStars(ctx, withdrawn); err != nil {
			return err
		}
		sum.Computed += int64(len(withdrawn))
	}
	tiles := make([]db.TileRun, len(states))
	for k, st := range states {
		tiles[k] = db.TileRun{Tile: st.Tile.Name, Ledger: st.Tile.LedgerPath(dir), TileRun: st.Run.ID}
	}
	if err := w.AddTiles(ctx, tiles); err != nil {
		return err
	}
	return w.Finish(ctx, db.RunSummary{})
}

// tileStars reads every tile's set of stars (mergeSets).
func tileStars(ctx context.Context, dir string, p *Plan, states []TileState) ([]source, []*db.PrevSet, []string, error) {
	sets := make([]*db.PrevSet, len(states))
	names := make([]string, len(states))
	for k, st := range states {
		l, err := db.Open(ctx, st.Tile.LedgerPath(dir), db.Options{ReadOnly: true})
		if err != nil {
			return nil, nil, nil, err
		}
		sets[k], err = l.PreviousState(ctx, st.Run.ID)
		l.Close()
		if err != nil {
			return nil, nil, nil, err
		}
		names[k] = st.Tile.Name
	}
	stars, problems := mergeSets(sets, names)
	return stars, sets, problems, nil
}

// mergeSets joins the tiles' sets of stars, each in star id order, into
// one list in star id order (a k-way merge: no map of every star). A star
// two tiles hold is a problem unless all but one hold it withdrawn (it
// moved between tiles after an update of its position); the live one is
// kept.
func mergeSets(sets []*db.PrevSet, names []string) ([]source, []string) {
	total := 0
	for _, set := range sets {
		total += set.Len()
	}
	out := make([]source, 0, total)
	var problems []string
	h := &cursors{sets: sets}
	for k, set := range sets {
		if set.Len() > 0 {
			h.at = append(h.at, cursor{tile: k})
		}
	}
	heap.Init(h)
	for h.Len() > 0 {
		c := h.at[0]
		s := source{tile: c.tile, idx: c.idx, id: sets[c.tile].IDs[c.idx], star: sets[c.tile].Stars[c.idx]}
		if n := len(out); n > 0 && out[n-1].id == s.id {
			prev := &out[n-1]
			switch {
			case prev.star.Status == string(verdict.Withdrawn):
				*prev = s
			case s.star.Status == string(verdict.Withdrawn):
			default:
				problems = append(problems, fmt.Sprintf("star %s is held by tiles %s and %s", s.id, names[prev.tile], names[s.tile]))
			}
		} else {
			out = append(out, s)
		}
		if h.at[0].idx++; h.at[0].idx == sets[c.tile].Len() {
			heap.Pop(h)
		} else {
			heap.Fix(h, 0)
		}
	}
	return out, problems
}

// cursors is a heap of positions in the tiles' sets, by star id.
type cursors struct {
	sets []*db.PrevSet
	at   []cursor
}

type cursor struct{ tile, idx int }

func (h *cursors) Len() int { return len(h.at) }
func (h *cursors) Less(i, j int) bool {
	a, b := h.at[i], h.at[j]
	if x, y := h.sets[a.tile].IDs[a.idx], h.sets[b.tile].IDs[b.idx]; x != y {
		return x < y
	}
	return a.tile < b.tile
}
func (h *cursors) Swap(i, j int) { h.at[i], h.at[j] = h.at[j], h.at[i] }
func (h *cursors) Push(x any)    { h.at = append(h.at, x.(cursor)) }
func (h *cursors) Pop() any {
	x := h.at[len(h.at)-1]
	h.at = h.at[:len(h.at)-1]
	return x
}

// foreignTiles lists directories under tiles/ that the plan does not name.
func foreignTiles(dir string, p *Plan) []string {
	entries, err := os.ReadDir(filepath.Join(dir, tilesDir))
	if err != nil {
		return []string{err.Error()}
	}
	var out []string
	for _, e := range entries {
		if !e.IsDir() {
			continue
		}
		if !slices.ContainsFunc(p.Tiles, func(t Tile) bool { return t.Name == e.Name() }) {
			out = append(out, fmt.Sprintf("%s is not a tile of this split's plan (order %d)", filepath.Join(dir, tilesDir, e.Name()), p.Order))
		}
	}
	return out
}

// allFull reports whether every tile's run recomputed every star on
// request (--full).
func allFull(states []TileState) bool {
	for _, st := range states {
		if !st.Run.Full {
			return false
		}
	}
	return len(states) > 0
}

// maxListed bounds the problems an error lists.
const maxListed = 50

func problemList(dir string, problems []string) error {
	n := len(problems)
	if n > maxListed {
		problems = append(problems[:maxListed], fmt.Sprintf("... and %d more", n-maxListed))
	}
	return fmt.Errorf("%s: %w (%d problems):\n  %s", dir, ErrIncomplete, n, strings.Join(problems, "\n  "))
}
