package quality

import (
	"bytes"
	"context"
	"math"
	"math/rand/v2"
	"syscall"
	"testing"
	"time"

	"starvet/catalog"
	"starvet/rules"
)

// benchStars makes n invented stars with two secondary catalogs; about a
// tenth of the optional values are missing and a few stars fail each rule.
func benchStars(n int, seed uint64) []Star {
	rng := rand.New(rand.NewPCG(seed, 1))
	stars := make([]Star, n)
	for i := range stars {
		s := &stars[i]
		for f := range s.Values {
			s.Values[f] = math.NaN()
		}
		v := &s.Values
		v[catalog.RA] = rng.Float64() * 360
		v[catalog.Dec] = rng.Float64()*180 - 90
		v[catalog.PMRA] = rng.NormFloat64() * 10
		v[catalog.PMDec] = rng.NormFloat64() * 10
		v[catalog.Parallax] = rng.Float64() * 2
		v[catalog.ParallaxErr] = 0.02 + rng.Float64()*0.3
		v[catalog.FitResidual] = 0.8 + rng.ExpFloat64()*0.2
		v[catalog.ExcessNoiseSig] = rng.ExpFloat64()
		v[catalog.FitVisits] = float64(5 + rng.IntN(20))
		v[catalog.DuplicateFlag] = 0
		if rng.IntN(50) == 0 {
			v[catalog.DuplicateFlag] = 1
		}
		if rng.IntN(10) != 0 {
			v[catalog.RV] = rng.NormFloat64() * 150
			v[catalog.RVErr] = rng.ExpFloat64() * 8
			v[catalog.SNR] = rng.ExpFloat64() * 30
		}
		if rng.IntN(5) == 0 {
			v[catalog.Distance] = 5 + rng.Float64()*50
		}
		s.Matches = make([]MatchInfo, 2)
		for c := range s.Matches {
			if rng.IntN(3) != 0 {
				s.Matches[c] = MatchInfo{Matched: true, SepArcsec: rng.ExpFloat64() * 0.3, Prob: 1 - rng.ExpFloat64()*0.03, Candidates: 1 + rng.IntN(2)}
				s.Matches[c].Ambiguous = s.Matches[c].Candidates > 1 && rng.IntN(4) == 0
			}
		}
		if rng.IntN(100) == 0 {
			s.DupCount = 1
		}
	}
	return stars
}

func benchEvaluator(b *testing.B) *Evaluator {
	rs, err := rules.Default(rules.Schema{Catalogs: []string{"spec-a", "phot-b"}})
	if err != nil {
		b.Fatal(err)
	}
	return NewEvaluator(rs, Context{ParallaxZeroPointMas: -0.02})
}

// BenchmarkAssess1M streams 1,000,000 stars through the default rule set
// on GOMAXPROCS workers, each reusing its Assessment (the way a pipeline
// that writes results out as it goes uses the evaluator).
func BenchmarkAssess1M(b *testing.B) {
	e := benchEvaluator(b)
	stars := benchStars(1_000_000, 7)
	ctx := context.Background()
	got := make([]byte, len(stars)) // one slot per star: workers never share one
	b.ResetTimer()
	cpu0 := cpuTime()
	for range b.N {
		if err := e.Each(ctx, stars, 0, func(i int, a *Assessment) {
			got[i] = a.Quality[0]
		}); err != nil {
			b.Fatal(err)
		}
	}
	reportCPU(b, cpu0)
	if bytes.Count(got, []byte{'r'}) == 0 || bytes.Count(got, []byte{'p'}) == 0 {
		b.Fatal("the sample should contain passes and rejects")
	}
}

// cpuTime is the process's user+system CPU time. The machine is shared, so
// wall time alone says little; CPU time per op shows the work done.
func cpuTime() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

func reportCPU(b *testing.B, cpu0 time.Duration) {
	b.ReportMetric(float64(cpuTime()-cpu0)/float64(b.N)/1e9, "cpu-s/op")
}

// BenchmarkAssessAll1M is the same with every Assessment kept in memory.
func BenchmarkAssessAll1M(b *testing.B) {
	e := benchEvaluator(b)
	stars := benchStars(1_000_000, 7)
	ctx := context.Background()
	b.ResetTimer()
	cpu0 := cpuTime()
	for range b.N {
		out := e.AssessAll(ctx, stars, 0)
		if out[len(out)-1].Quality == "" {
			b.Fatal("last star not assessed")
		}
	}
	reportCPU(b, cpu0)
}

// BenchmarkAssessStar is the single-goroutine cost of one star against the
// default rule set, cycling through 4096 stars that stay in cache.
func BenchmarkAssessStar(b *testing.B) {
	e := benchEvaluator(b)
	stars := benchStars(4096, 11)
	var a Assessment
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		e.Assess(&stars[i&4095], &a)
	}
}
