package catalog

import (
	"fmt"
	"math"
	"math/rand/v2"
	"reflect"
	"strconv"
	"testing"
)

type bulkRaw struct{ first int }

func (b bulkRaw) Record(r int) []string  { return []string{strconv.Itoa(r)} }
func (b bulkRaw) FieldLine(r, _ int) int { return b.first + r }

// ConvertColumns with AddConverted gives the batch, table and report that
// ConvertValues with Add gives, row by row: the same values (to the bit),
// the same quarantined rows in the same order for the same reasons.
func TestConvertColumnsAsValues(t *testing.T) {
	metas := [][]ColumnMeta{
		{{Name: "id"}, {Name: "ra", Unit: "deg"}, {Name: "dec", Unit: "deg"}, {Name: "parallax", Unit: "arcsec"},
			{Name: "pm_ra", Unit: "mas/yr"}, {Name: "ra_err", Unit: "mas"}, {Name: "corr_ra_dec"}, {Name: "mag", Unit: "mag"}},
		{{Name: "dec", Unit: "deg"}, {Name: "distance", Unit: "mag"}, {Name: "id"}, {Name: "ra", Unit: "hour"}, {Name: "distance_err", Unit: "mag"}},
		{{Name: "ra", Unit: "deg"}, {Name: "id"}, {Name: "dec", Unit: "deg"}, {Name: "distance", Unit: "mag"}},
	}
	rng := rand.New(rand.NewPCG(7, 8))
	pick := func() float64 {
		switch rng.IntN(14) {
		case 0:
			return math.NaN()
		case 1:
			return math.Float64frombits(0xfff4000000000abc) // not math.NaN's bits
		case 5:
			return []float64{0, math.Copysign(0, -1), 360, 24, -90, 90, -1, 1, 0.09, 1e-300}[rng.IntN(10)] // edges
		case 2:
			return math.Inf(1 - 2*rng.IntN(2))
		case 3:
			return rng.Float64()*1000 - 500
		case 4:
			return 1e308
		}
		return rng.Float64() * 3
	}
	for mi, meta := range metas {
		for _, rows := range []bool{false, true} {
			t.Run(fmt.Sprintf("layout%d/rows=%v", mi, rows), func(t *testing.T) {
				mk := func() *Builder {
					b, _, err := NewBuilderFromMeta(Spec{Name: "x", File: "x.bin"}, meta, rows, ReadOptions{})
					if err != nil {
						t.Fatal(err)
					}
					return b
				}
				b1, b2 := mk(), mk()
				l1, l2 := b1.Layout(), b2.Layout()
				const n, first = 3000, 101
				ncol := len(l1.Columns)
				in := make([][]float64, ncol)
				for k := range in {
					in[k] = make([]float64, n)
					for r := range in[k] {
						in[k][r] = pick()
					}
				}
				ids := make([][]byte, n)
				for r := range ids {
					if rng.IntN(50) > 0 {
						ids[r] = fmt.Appendf(nil, "s-%d", rng.IntN(n*2)) // some repeat
					}
				}
				for pass := range 2 {
					var one, all Batch
					one.Begin(l1, n)
					vals := make([]float64, ncol)
					for r := range n {
						at := first + pass*n + r
						if ids[r] == nil {
							one.Reject(at, l1.MissingID(at))
							continue
						}
						for k := range vals {
							vals[k] = in[k][r]
						}
						if q := l1.ConvertValues(vals, one.Row(), at); q != nil {
							one.Reject(at, q)
							continue
						}
						one.Add(at, ids[r])
					}
					one.End()

					all.Begin(l2, n)
					for k := range ncol {
						copy(all.Vals[k], in[k])
					}
					bad := make([]*Quarantine, n)
					for r := range n {
						if ids[r] == nil {
							bad[r] = l2.MissingID(first + pass*n + r)
						}
					}
					l2.ConvertColumns(all.Vals, n, first+pass*n, bad)
					for r := range n {
						at := first + pass*n + r
						if bad[r] != nil {
							all.Reject(at, bad[r])
							continue
						}
						all.AddConverted(at, ids[r])
					}
					all.End()
					if !reflect.DeepEqual(one.bad, all.bad) || !reflect.DeepEqual(one.lines, all.lines) || one.ids != all.ids ||
						!reflect.DeepEqual(one.idOff, all.idOff) || !reflect.DeepEqual(one.idHash, all.idHash) {
						t.Fatalf("pass %d: batches differ in rows, ids or quarantines", pass)
					}
					for r := range n {
						if one.bad[r] != nil {
							continue
						}
						for k := range one.Vals {
							if a, b := math.Float64bits(one.Vals[k][r]), math.Float64bits(all.Vals[k][r]); a != b {
								t.Fatalf("pass %d row %d value %d: %x, want %x", pass, r, k, b, a)
							}
						}
					}
					if err := b1.Add(&one, bulkRaw{first + pass*n}); err != nil {
						t.Fatal(err)
					}
					if err := b2.Add(&all, bulkRaw{first + pass*n}); err != nil {
						t.Fatal(err)
					}
				}
				t1, r1 := b1.Finish()
				t2, r2 := b2.Finish()
				if !reflect.DeepEqual(r1, r2) {
					t.Fatalf("reports differ")
				}
				if t1.Len() == 0 || len(r1.Quarantined) == 0 {
					t.Fatalf("kept %d, quarantined %d: the test needs both", t1.Len(), len(r1.Quarantined))
				}
				if !reflect.DeepEqual(t1.IDs, t2.IDs) || !reflect.DeepEqual(t1.Lines, t2.Lines) {
					t.Fatalf("ids or lines differ")
				}
				for f := range t1.Cols {
					if len(t1.Cols[f]) != len(t2.Cols[f]) || (t1.Cols[f] == nil) != (t2.Cols[f] == nil) {
						t.Fatalf("column %d: %d values, want %d", f, len(t2.Cols[f]), len(t1.Cols[f]))
					}
					for i := range t1.Cols[f] {
						if math.Float64bits(t1.Cols[f][i]) != math.Float64bits(t2.Cols[f][i]) {
							t.Fatalf("column %d row %d: %v, want %v", f, i, t2.Cols[f][i], t1.Cols[f][i])
						}
					}
				}
			})
		}
	}
}
