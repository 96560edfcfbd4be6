package crossmatch

import (
	"context"
	"math"
	"math/rand/v2"
	"os"
	"strconv"
	"syscall"
	"testing"

	"starvet/catalog"
	"starvet/internal/units"
)

// benchPair makes two all-sky catalogs of n sources: secondary = primary
// positions scattered by a 0.3 arcsec Gaussian per axis, rows shuffled.
// Both carry 0.3 arcsec positional errors, equal epochs.
func benchPair(n int, seed uint64) (*catalog.Table, *catalog.Table) {
	rng := rand.New(rand.NewPCG(seed, 0x5eed))
	mk := func(name string) *catalog.Table {
		t := &catalog.Table{Name: name, EpochJyr: 2020, IDs: make([]string, n)}
		for _, f := range []catalog.Field{catalog.RA, catalog.Dec, catalog.RAErr, catalog.DecErr} {
			t.Cols[f] = make([]float64, n)
		}
		return t
	}
	p, s := mk("bench-primary"), mk("bench-secondary")
	perm := rng.Perm(n)
	const scatterArcsec = 0.3
	for i := 0; i < n; i++ {
		// uniform on the sphere: z = sin(dec) uniform in [-1, 1]
		ra := rng.Float64() * 360
		dec := math.Asin(2*rng.Float64()-1) * units.DegPerRad
		p.IDs[i] = "P" + strconv.Itoa(i)
		p.Cols[catalog.RA][i], p.Cols[catalog.Dec][i] = ra, dec
		j := perm[i]
		dRA := rng.NormFloat64() * scatterArcsec / units.ArcsecPerDeg / math.Max(math.Cos(dec*units.RadPerDeg), 1e-6)
		dDec := rng.NormFloat64() * scatterArcsec / units.ArcsecPerDeg
		d2 := dec + dDec
		r2 := ra + dRA
		if d2 > 90 { // reflect over the pole
			d2, r2 = 180-d2, r2+180
		} else if d2 < -90 {
			d2, r2 = -180-d2, r2+180
		}
		s.IDs[j] = "S" + strconv.Itoa(j)
		s.Cols[catalog.RA][j], s.Cols[catalog.Dec][j] = normRA(r2), d2
	}
	for _, t := range []*catalog.Table{p, s} {
		for i := 0; i < n; i++ {
			t.Cols[catalog.RAErr][i], t.Cols[catalog.DecErr][i] = 300, 300
		}
	}
	return p, s
}

func benchMatch(b *testing.B, n int) {
	p, s := benchPair(n, 1)
	b.ReportAllocs()
	b.ResetTimer()
	var res *Result
	cpu0 := cpuSeconds()
	for b.Loop() {
		res = nil // let the previous result go: one Match per op
		var err error
		res, err = Match(context.Background(), p, s, Options{RadiusArcsec: 1})
		if err != nil {
			b.Fatal(err)
		}
	}
	b.StopTimer()
	// CPU seconds of the whole process per op: on a shared machine this
	// is steadier than wall time (ns/op).
	b.ReportMetric((cpuSeconds()-cpu0)/float64(b.N), "cpu-s/op")
	b.ReportMetric(float64(res.Stats.Matched)/float64(n), "matched/row")
}

// BenchmarkMatch1M: index build plus matching of two 1M-source all-sky
// catalogs at 1 arcsec (target: <= 1 s/op, <= 600 MB peak RSS on 2 cores).
func BenchmarkMatch1M(b *testing.B) { benchMatch(b, 1_000_000) }

// BenchmarkMatch10M runs 10M x 10M when STARVET_BENCH_10M=1 (to check that
// it fits in 24 GB; read the peak RSS with /usr/bin/time -v).
func BenchmarkMatch10M(b *testing.B) {
	if os.Getenv("STARVET_BENCH_10M") != "1" {
		b.Skip("set STARVET_BENCH_10M=1 to run 10M x 10M")
	}
	benchMatch(b, 10_000_000)
}

// cpuSeconds is the user+system CPU time used by the process so far.
func cpuSeconds() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return math.NaN()
	}
	return float64(ru.Utime.Nano()+ru.Stime.Nano()) / 1e9
}

// BenchmarkSelfMatch1M: duplicate counts of a 1M-source all-sky catalog
// within 1 arcsec (index build plus queries).
func BenchmarkSelfMatch1M(b *testing.B) {
	p, _ := benchPair(1_000_000, 2)
	b.ReportAllocs()
	b.ResetTimer()
	cpu0 := cpuSeconds()
	for b.Loop() {
		if _, err := SelfMatch(context.Background(), p, 1, 0); err != nil {
			b.Fatal(err)
		}
	}
	b.StopTimer()
	b.ReportMetric((cpuSeconds()-cpu0)/float64(b.N), "cpu-s/op")
}
