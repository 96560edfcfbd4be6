package report

import (
	"context"
	"fmt"
	"math/rand/v2"
	"testing"

	"starvet/db"
	"starvet/galaxy/potential"
)

// bigFixture is a run of n stars shaped like the demo: mostly rejected, a
// few thousand without rv, about one per cent with a speed, 100 traced
// stars with 200 crossings each.
func bigFixture(n int) *fakeSource {
	rng := rand.New(rand.NewPCG(11, 12))
	f := fixture(potential.DefaultModel)
	var vs []db.VerdictRow
	traced := 0
	for i := range n {
		id := fmt.Sprintf("BX-%07d", i)
		u := rng.Float64()
		var v db.VerdictRow
		switch {
		case u < 0.92:
			v = verdictRow(2, id, "rejected")
			f.reasons["2/"+id] = []db.ReasonRow{{RuleID: fmt.Sprintf("rule-%d", rng.IntN(6)), Outcome: "fail", Message: "made up"}}
		case u < 0.98:
			v = verdictRow(2, id, "needs-rv")
			v.RGCKpc, v.VEscKms = 5+20*rng.Float64(), 500
		default:
			p50 := 100 + 900*rng.Float64()
			st := "bound"
			if p50 > 600 {
				st = "unbound"
			}
			v = moving(verdictRow(2, id, st), p50*0.9, p50, p50*1.1, 5+60*rng.Float64(), 450, rng.Float64(), potential.DefaultModel)
			if st == "unbound" && traced < 100 {
				traced++
				for range 200 {
					f.crossings[2] = append(f.crossings[2], db.CrossingRow{StarID: id, XKpc: rng.NormFloat64(), YKpc: rng.NormFloat64(), TMyr: 50})
				}
			}
		}
		vs = append(vs, v)
		f.positions[id] = [2]float64{360 * rng.Float64(), -90 + 180*rng.Float64()}
	}
	f.verdicts[2] = vs
	return f
}

func BenchmarkWrite50k(b *testing.B) {
	f := bigFixture(50000)
	dir := b.TempDir()
	b.ResetTimer()
	for b.Loop() {
		if _, err := Write(context.Background(), f, 2, dir, Options{}); err != nil {
			b.Fatal(err)
		}
	}
}
