package shard

import (
	"context"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"starvet/catalog"
	"starvet/internal/position"
)

// awkward are values that must survive bit for bit.
var awkward = []float64{
	math.NaN(), math.Inf(1), math.Inf(-1), math.Copysign(0, -1), 0,
	math.SmallestNonzeroFloat64, -math.SmallestNonzeroFloat64, 2.2250738585072009e-308, // subnormals
	math.MaxFloat64, -math.MaxFloat64, 1.0 / 3, 359.99999999999994,
	math.Float64frombits(0x7ff8_0000_dead_beef), // a NaN with a payload
}

// testTable has every field but pm_dec_err and snr, ids in several
// scripts, and lines that are not 1..n.
func testTable(n int) *catalog.Table {
	t := &catalog.Table{Name: "alpha-survey", Release: "r7", Role: catalog.Astrometry, EpochJyr: 2016.25}
	scripts := []string{"αβγ-", "星-", "", "ünï ", "🛰️-", "x\x00y-"}
	for i := range n {
		t.IDs = append(t.IDs, scripts[i%len(scripts)]+string(rune('a'+i%26))+strings.Repeat("z", i%7)+string(rune('0'+i/26%10))+string(rune('A'+i/260%26)))
		t.Lines = append(t.Lines, 3+i*2+i%5*1000)
	}
	for f := catalog.Field(1); f < catalog.NumFields; f++ {
		if f == catalog.PMDecErr || f == catalog.SNR {
			continue
		}
		col := make([]float64, n)
		for i := range col {
			if i%3 == 0 {
				col[i] = awkward[(i/3+int(f))%len(awkward)]
			} else {
				col[i] = float64(f)*1000 + float64(i)*0.1
			}
		}
		t.Cols[f] = col
	}
	return t
}

func readShard(t *testing.T, spec catalog.Spec) (*catalog.Table, *catalog.Report) {
	t.Helper()
	tab, rep, err := Reader{}.Read(context.Background(), spec, catalog.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	return tab, rep
}

// sameRows fails unless got's row i is src's row rows[i], every float bit
// for bit, and got has exactly src's columns.
func sameRows(t *testing.T, src, got *catalog.Table, rows []int32) {
	t.Helper()
	if got.Len() != len(rows) || len(got.Lines) != len(rows) {
		t.Fatalf("got %d ids, %d lines, want %d", got.Len(), len(got.Lines), len(rows))
	}
	for i, r := range rows {
		if got.IDs[i] != src.IDs[r] || got.Lines[i] != src.Lines[r] {
			t.Fatalf("row %d: id %q line %d, want %q line %d", i, got.IDs[i], got.Lines[i], src.IDs[r], src.Lines[r])
		}
	}
	for f := catalog.Field(0); f < catalog.NumFields; f++ {
		a, b := src.Cols[f], got.Cols[f]
		if (a == nil) != (b == nil) {
			t.Fatalf("%s: present %v, want %v", catalog.Fields[f].Name, b != nil, a != nil)
		}
		if a == nil {
			continue
		}
		if len(b) != len(rows) {
			t.Fatalf("%s: %d values, want %d", catalog.Fields[f].Name, len(b), len(rows))
		}
		for i, r := range rows {
			if math.Float64bits(b[i]) != math.Float64bits(a[r]) {
				t.Fatalf("%s row %d: bits %016x, want %016x", catalog.Fields[f].Name, i, math.Float64bits(b[i]), math.Float64bits(a[r]))
			}
		}
	}
}

func TestShardRoundTripSubset(t *testing.T) {
	src := testTable(1000)
	var rows []int32
	for r := int32(1); r < 1000; r += 7 {
		rows = append(rows, r)
	}
	dir := t.TempDir()
	path := filepath.Join(dir, "tile-17.shard")
	if err := Write(path, src, rows); err != nil {
		t.Fatal(err)
	}
	spec := catalog.Spec{Name: "beta-name", File: path, Role: catalog.Photometry}
	got, rep := readShard(t, spec)
	sameRows(t, src, got, rows)
	if got.Name != "beta-name" || got.Release != "r7" || got.Role != catalog.Photometry || got.EpochJyr != 2016.25 {
		t.Errorf("name %q release %q role %q epoch %v", got.Name, got.Release, got.Role, got.EpochJyr)
	}
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	sum := sha256.Sum256(raw)
	if rep.SHA256 != hex.EncodeToString(sum[:]) {
		t.Errorf("SHA256 %s, want %x", rep.SHA256, sum)
	}
	if rep.File != path || rep.RowsRead != len(rows) || rep.RowsKept != len(rows) || len(rep.Quarantined) != 0 {
		t.Errorf("report %+v", rep)
	}
	if len(rep.Header) != int(catalog.NumFields)-2 || rep.Header[0] != "id" || rep.Mapped["parallax"] != "parallax" || rep.Mapped["snr"] != "" {
		t.Errorf("header %v mapped %v", rep.Header, rep.Mapped)
	}
	// The spec's release and epoch win over the stored ones.
	spec.Release, spec.EpochJyr = "r8", 2000
	if got, _ := readShard(t, spec); got.Release != "r8" || got.EpochJyr != 2000 {
		t.Errorf("release %q epoch %v, want the spec's", got.Release, got.EpochJyr)
	}
	ents, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	if len(ents) != 1 || ents[0].Name() != "tile-17.shard" {
		t.Errorf("directory holds %v, want the shard only", ents)
	}
}

func TestShardWriteAllAndColumns(t *testing.T) {
	src := testTable(60)
	src.Cols[catalog.Distance], src.Cols[catalog.DistanceErr] = nil, nil
	path := filepath.Join(t.TempDir(), "all.shard")
	if err := WriteAll(path, src); err != nil {
		t.Fatal(err)
	}
	got, _ := readShard(t, catalog.Spec{File: path})
	all := make([]int32, src.Len())
	for i := range all {
		all[i] = int32(i)
	}
	sameRows(t, src, got, all)
	if got.Name != "alpha-survey" || got.Role != catalog.Astrometry {
		t.Errorf("stored name %q role %q not kept for an empty spec", got.Name, got.Role)
	}
	cols, err := Reader{}.Columns(context.Background(), catalog.Spec{File: path})
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, c := range cols {
		names = append(names, c.Name)
		f, _ := catalog.FieldByName(c.Name)
		if f != catalog.ID && c.Unit != catalog.Fields[f].Unit {
			t.Errorf("%s: unit %q", c.Name, c.Unit)
		}
	}
	want := []string{"id"}
	for f := catalog.Field(1); f < catalog.NumFields; f++ {
		if src.Cols[f] != nil {
			want = append(want, catalog.Fields[f].Name)
		}
	}
	if strings.Join(names, ",") != strings.Join(want, ",") {
		t.Errorf("columns %v, want %v", names, want)
	}
	// The columns a shard describes map onto the fields they are named
	// after (distance_modulus and its error cannot be mapped from a file);
	// the fields missing are those the table lacks.
	rows, missing, err := catalog.Spec{File: path}.Describe(cols)
	if err != nil {
		t.Fatal(err)
	}
	var wantMissing []catalog.Field
	for f := catalog.Field(1); f < catalog.NumFields; f++ {
		if src.Cols[f] == nil && catalog.Mappable(f) {
			wantMissing = append(wantMissing, f)
		}
	}
	if fmt.Sprint(missing) != fmt.Sprint(wantMissing) {
		t.Errorf("describe: missing %v, want %v", missing, wantMissing)
	}
	for _, r := range rows {
		f, _ := catalog.FieldByName(r.Name)
		want := ""
		if catalog.Mappable(f) {
			want = catalog.Fields[f].Name
		}
		if r.Field != want {
			t.Errorf("column %s describes field %q", r.Name, r.Field)
		}
	}
}

func TestShardEmptyTable(t *testing.T) {
	src := &catalog.Table{Name: "gamma", Cols: [catalog.NumFields][]float64{catalog.RA: {}, catalog.Dec: {}}}
	path := filepath.Join(t.TempDir(), "empty.shard")
	if err := WriteAll(path, src); err != nil {
		t.Fatal(err)
	}
	got, rep := readShard(t, catalog.Spec{File: path})
	if got.Len() != 0 || got.Cols[catalog.RA] == nil || got.Cols[catalog.Parallax] != nil || rep.RowsKept != 0 {
		t.Errorf("got %+v", got)
	}
}

// A spec that maps columns or units is refused; identity maps are not.
func TestShardRefusesMapping(t *testing.T) {
	path := filepath.Join(t.TempDir(), "eps.shard")
	if err := WriteAll(path, testTable(5)); err != nil {
		t.Fatal(err)
	}
	for _, spec := range []catalog.Spec{
		{File: path, Columns: map[string]string{"parallax": "plx"}},
		{File: path, Units: map[string]string{"pm_ra": "arcsec/yr"}},
		{File: path, Units: map[string]string{"nonsense": "mas"}},
	} {
		_, _, err := Reader{}.Read(context.Background(), spec, catalog.ReadOptions{})
		var pe *position.Error
		if !errors.Is(err, ErrMapping) || !errors.Is(err, catalog.ErrBadSpec) || !errors.As(err, &pe) || pe.File != path {
			t.Errorf("%v %v: %v", spec.Columns, spec.Units, err)
		}
	}
	ok := catalog.Spec{File: path, Columns: map[string]string{"ra": "ra"}, Units: map[string]string{"pm_ra": "mas/yr"}}
	if _, _, err := (Reader{}).Read(context.Background(), ok, catalog.ReadOptions{}); err != nil {
		t.Errorf("identity mapping: %v", err)
	}
}

// Every damage is an error naming the file, with the right sentinel, and
// no table.
func TestShardDamage(t *testing.T) {
	dir := t.TempDir()
	good := filepath.Join(dir, "good.shard")
	if err := WriteAll(good, testTable(200)); err != nil {
		t.Fatal(err)
	}
	raw, err := os.ReadFile(good)
	if err != nil {
		t.Fatal(err)
	}
	flip := func(at int) []byte {
		b := append([]byte(nil), raw...)
		b[at] ^= 0x10
		return b
	}
	future := append([]byte(nil), raw...)
	binary.LittleEndian.PutUint32(future[len(magic):], Version+1)
	for _, c := range []struct {
		name     string
		data     []byte
		sentinel error
		says     string
	}{
		{"truncated", raw[:len(raw)-5], ErrCorrupt, "truncated"},
		{"truncated-header", raw[:headerSize-3], ErrCorrupt, "header"},
		{"appended", append(append([]byte(nil), raw...), 0), ErrCorrupt, "appended"},
		{"flipped-value", flip(len(raw) - 100), ErrCorrupt, "checksum"},
		{"flipped-id", flip(headerSize + 40), ErrCorrupt, ""},
		{"flipped-crc", flip(len(magic) + 5), ErrCorrupt, "checksum"},
		{"wrong-magic", flip(2), ErrNotShard, "magic"},
		{"empty", nil, ErrNotShard, "magic"},
		{"future", future, ErrVersion, "version 2"},
	} {
		path := filepath.Join(dir, c.name+".shard")
		if err := os.WriteFile(path, c.data, 0o644); err != nil {
			t.Fatal(err)
		}
		tab, _, err := Reader{}.Read(context.Background(), catalog.Spec{File: path}, catalog.ReadOptions{})
		var pe *position.Error
		if tab != nil || !errors.Is(err, c.sentinel) || !errors.Is(err, catalog.ErrUnreadable) ||
			!errors.As(err, &pe) || pe.File != path || !strings.Contains(err.Error(), path) || !strings.Contains(err.Error(), c.says) {
			t.Errorf("%s: table %v, error %v", c.name, tab != nil, err)
		}
	}
	if _, _, err := (Reader{}).Read(context.Background(), catalog.Spec{File: filepath.Join(dir, "none.shard")}, catalog.ReadOptions{}); !errors.Is(err, catalog.ErrNoFile) {
		t.Errorf("missing file: %v", err)
	}
}

// A flipped byte anywhere is caught.
func TestShardEveryByteGuarded(t *testing.T) {
	dir := t.TempDir()
	good := filepath.Join(dir, "good.shard")
	if err := WriteAll(good, testTable(4)); err != nil {
		t.Fatal(err)
	}
	raw, err := os.ReadFile(good)
	if err != nil {
		t.Fatal(err)
	}
	bad := filepath.Join(dir, "bad.shard")
	for at := range raw {
		b := append([]byte(nil), raw...)
		b[at] ^= 1 << (at % 8)
		if err := os.WriteFile(bad, b, 0o644); err != nil {
			t.Fatal(err)
		}
		if _, _, err := (Reader{}).Read(context.Background(), catalog.Spec{File: bad}, catalog.ReadOptions{}); err == nil || !strings.Contains(err.Error(), bad) {
			t.Fatalf("byte %d flipped: %v", at, err)
		}
	}
}

func TestShardWriteRefusesBadInput(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "zeta.shard")
	src := testTable(10)
	for _, rows := range [][]int32{{0, 10}, {-1}} {
		if err := Write(path, src, rows); err == nil || !strings.Contains(err.Error(), path) {
			t.Errorf("rows %v: %v", rows, err)
		}
	}
	short := testTable(10)
	short.Cols[catalog.RV] = short.Cols[catalog.RV][:9]
	if err := Write(path, short, []int32{0}); err == nil || !strings.Contains(err.Error(), "rv") {
		t.Errorf("short column: %v", err)
	}
	if err := Write(filepath.Join(dir, "no-dir", "x.shard"), src, []int32{0}); err == nil {
		t.Error("writing into a missing directory succeeded")
	}
	if ents, _ := os.ReadDir(dir); len(ents) != 0 {
		t.Errorf("failed writes left %v", ents)
	}
}

func TestShardContextCancelled(t *testing.T) {
	path := filepath.Join(t.TempDir(), "eta.shard")
	if err := WriteAll(path, testTable(100)); err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, _, err := (Reader{}).Read(ctx, catalog.Spec{File: path}, catalog.ReadOptions{}); !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled read: %v", err)
	}
}
