package tiling

import (
	"context"
	"errors"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"starvet/campaign"
	"starvet/db"
	"starvet/vetting"
)

func TestMergeSets(t *testing.T) {
	set := func(ids []string, status ...string) *db.PrevSet {
		p := &db.PrevSet{IDs: ids}
		for _, s := range status {
			p.Stars = append(p.Stars, db.PrevStar{Status: s})
		}
		return p
	}
	stars, problems := mergeSets([]*db.PrevSet{
		set([]string{"a", "b", "c"}, "bound", "withdrawn", "rejected"),
		set([]string{"b", "c", "d"}, "unbound", "bound", "withdrawn"),
		set([]string{"d"}, "withdrawn"),
	}, []string{"t0", "t1", "t2"})
	if len(problems) != 1 || !strings.Contains(problems[0], "star c is held by tiles t0 and t1") {
		t.Errorf("problems %q, want only star c held twice", problems)
	}
	var ids []string
	for _, s := range stars {
		ids = append(ids, s.id)
	}
	if !slices.Equal(ids, []string{"a", "b", "c", "d"}) {
		t.Fatalf("stars %v, want a b c d once each in order", ids)
	}
	if s := stars[1]; s.tile != 1 || s.idx != 0 || s.star.Status != "unbound" {
		t.Errorf("star b: %+v, want tile 1's live verdict over tile 0's withdrawal", s)
	}
	if s := stars[3]; s.star.Status != "withdrawn" {
		t.Errorf("star d: %+v, want withdrawn", s)
	}
}

// Gathering refuses, listing every problem, a set with a tile never run,
// a tile ledger made from another campaign, a directory that is no tile of
// the plan, and a campaign changed since the split; a tile whose run was
// interrupted is run again alone and the gather then succeeds.
func TestGatherRefusesIncompleteSets(t *testing.T) {
	if testing.Short() {
		t.Skip("runs a campaign in tiles")
	}
	ctx := context.Background()
	rng := rand.New(rand.NewPCG(3, 9))
	dir := t.TempDir()
	cpath := writeSky(t, dir, skyTestStars(rng, 400, true), "r1")
	c, err := campaign.Load(cpath)
	if err != nil {
		t.Fatal(err)
	}
	e := &vetting.Engine{Workers: 2, ToolVersion: "test"}
	split := filepath.Join(dir, "split")
	p, err := Split(ctx, e, c, split, SplitOptions{Order: 1})
	if err != nil {
		t.Fatal(err)
	}
	if len(p.Tiles) < 4 {
		t.Fatalf("%d tiles", len(p.Tiles))
	}
	gathered := filepath.Join(dir, "gathered.db")
	gather := func() error {
		_, err := Gather(ctx, split, GatherOptions{Ledger: gathered, ToolVersion: "test"})
		return err
	}
	// No tile run yet: every tile is listed.
	err = gather()
	if !errors.Is(err, ErrIncomplete) || strings.Count(err.Error(), "never run") != len(p.Tiles) {
		t.Fatalf("gather before any tile ran: %v", err)
	}
	runTiles(t, ctx, e, split)
	missing, foreign := p.Tiles[1], p.Tiles[2]
	if err := os.Rename(missing.LedgerPath(split), missing.LedgerPath(split)+".away"); err != nil {
		t.Fatal(err)
	}
	// A tile ledger run from another tile's campaign.
	swapped := foreign.LedgerPath(split)
	if err := os.Rename(swapped, swapped+".own"); err != nil {
		t.Fatal(err)
	}
	if err := copyFile(p.Tiles[3].LedgerPath(split), swapped); err != nil {
		t.Fatal(err)
	}
	if err := os.MkdirAll(filepath.Join(split, tilesDir, "o9-123"), 0o755); err != nil {
		t.Fatal(err)
	}
	err = gather()
	for _, want := range []string{"tile " + missing.Name + ": never run", "tile " + foreign.Name + ": its last complete run", "o9-123 is not a tile"} {
		if err == nil || !strings.Contains(err.Error(), want) {
			t.Errorf("gather error %v\nlacks %q", err, want)
		}
	}
	if _, statErr := os.Stat(gathered); statErr == nil {
		l, _ := db.Open(ctx, gathered, db.Options{ReadOnly: true})
		if r, _ := l.LastCompleteRun(ctx); r != nil {
			t.Errorf("a refused gather wrote run %d", r.ID)
		}
		l.Close()
	}
	os.Remove(swapped)
	for _, f := range []string{"", "-wal", "-shm"} {
		os.Rename(swapped+".own"+f, swapped+f)
	}
	os.Rename(missing.LedgerPath(split)+".away", missing.LedgerPath(split))
	os.Remove(filepath.Join(split, tilesDir, "o9-123"))

	// A tile whose only run was interrupted: it alone is not up to date,
	// runs again alone, and the gather then succeeds.
	for _, f := range []string{"", "-wal", "-shm"} {
		os.Remove(missing.LedgerPath(split) + f)
	}
	tc, err := campaign.Load(missing.CampaignPath(split))
	if err != nil {
		t.Fatal(err)
	}
	cctx, cancel := context.WithCancel(ctx)
	killer := &vetting.Engine{Workers: 2, ToolVersion: "test", Progress: cancelAt{"Monte Carlo", cancel}}
	if _, err := killer.Run(cctx, tc, vetting.RunOptions{}); err == nil {
		t.Fatal("a tile run cancelled while vetting succeeded")
	}
	if err := gather(); err == nil || !strings.Contains(err.Error(), "tile "+missing.Name+": no complete run") {
		t.Errorf("gather with an interrupted tile: %v", err)
	}
	if ran := runTiles(t, ctx, e, split); len(ran) != 1 || ran[0] != missing.Name {
		t.Errorf("ran %v again, want only %s", ran, missing.Name)
	}
	if err := gather(); err != nil {
		t.Fatalf("gather after the interrupted tile ran again: %v", err)
	}

	// The campaign changed since the split.
	text, _ := os.ReadFile(cpath)
	os.WriteFile(cpath, append(text, []byte("\n[galaxy]\nsun_distance_kpc = 8.3\n")...), 0o644)
	if err := gather(); !errors.Is(err, ErrIncomplete) || !strings.Contains(err.Error(), "changed since the split") {
		t.Errorf("gather after the campaign changed: %v", err)
	}
}

func copyFile(from, to string) error {
	b, err := os.ReadFile(from)
	if err != nil {
		return err
	}
	return os.WriteFile(to, b, 0o644)
}

// cancelAt cancels a run when a stage whose name holds stage begins.
type cancelAt struct {
	stage  string
	cancel context.CancelFunc
}

func (c cancelAt) Begin(stage string, _ int) vetting.Stage {
	if strings.Contains(stage, c.stage) {
		c.cancel()
	}
	return nopStage{}
}

type nopStage struct{}

func (nopStage) Set(int) {}
func (nopStage) End()    {}
