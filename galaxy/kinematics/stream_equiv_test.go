package kinematics

import (
	"math"
	"os"
	"strconv"
	"strings"
	"testing"

	"starvet/internal/vec"
)

// streamRefStars is every 17th of stopStars: every method, with and without rv.
func streamRefStars() []Star {
	all := stopStars()
	var out []Star
	for i := 0; i < len(all); i += 17 {
		out = append(out, all[i])
	}
	return out
}

// weightedShareBelow is the share of weight w of the values v at or below x
// and Kish's effective sample size (sum w)^2 / sum w^2 (Kish 1965, Survey
// Sampling).
func weightedShareBelow(v, w []float64, x float64) (share, nEff float64) {
	var sw, sw2, below float64
	for i := range v {
		sw += w[i]
		sw2 += w[i] * w[i]
		if v[i] <= x {
			below += w[i]
		}
	}
	return below / sw, sw * sw / sw2
}

// The xoshiro256++ stream against the PCG-DXSM stream it replaced:
// testdata/stream_pcg_results.txt holds the results of the code of commit
// 693a20e (PCG) for every 17th invented test star, 4000 draws, flat and
// 150 km/s velocity prior. The same stars with the new stream must agree
// within Monte Carlo error: the unweighted unbound share within 4 combined
// binomial standard errors (Laplace estimate (k+1)/(n+2) so that 0 has one;
// common practice), and each old speed and distance percentile (level q)
// must sit at a share of the new draws (weighted by the prior as the
// resample is) within 4 sqrt(2 q (1-q) / n_eff) of q: the binomial count
// behind the order-statistic interval of a quantile (e.g. David & Nagaraja
// 2003, Order Statistics, 3rd ed., sec. 7.1, from memory), widened by
// sqrt(2) for the error of the old percentile itself.
func TestStreamMatchesOldStatistically(t *testing.T) {
	const z = 4
	data, err := os.ReadFile("testdata/stream_pcg_results.txt")
	if err != nil {
		t.Fatal(err)
	}
	stars := map[string]Star{}
	for _, s := range streamRefStars() {
		stars[s.ID] = s
	}
	rows := 0
	for _, line := range strings.Split(strings.TrimSpace(string(data)), "\n") {
		if strings.HasPrefix(line, "#") {
			continue
		}
		f := strings.Fields(line)
		num := make([]float64, len(f))
		for i := 2; i < len(f); i++ {
			num[i], _ = strconv.ParseFloat(f[i], 64)
		}
		s, ok := stars[f[0]]
		if !ok || len(f) != 19 {
			t.Fatalf("row %q: unknown star or %d fields", f[0], len(f))
		}
		rows++
		prior := num[2]
		set := testSettings()
		set.Samples, set.KeepSamples, set.VelocityPriorKms = 4000, 0, prior
		r := eval(s, set)
		if r.Method != f[1] || strconv.FormatBool(r.OK) != f[3] || strconv.FormatBool(r.HasRV) != f[4] || strconv.Itoa(r.Samples) != f[5] {
			t.Errorf("%s prior %g: method %s ok %v rv %v samples %d, was %v", s.ID, prior, r.Method, r.OK, r.HasRV, r.Samples, f[1:6])
			continue
		}
		if !r.OK {
			continue
		}
		n := float64(set.Samples)
		pOld, pNew := num[8], r.PUnboundLower
		if r.HasRV {
			pOld, pNew = num[6], r.PUnbound
			if prior > 0 {
				pOld, pNew = num[7], r.PUnboundFlat
			}
		}
		pl := (pOld*n + 1) / (n + 2)
		if se := math.Sqrt(pl * (1 - pl) * 2 / n); math.Abs(pNew-pOld) > z*se {
			t.Errorf("%s prior %g: p %v, was %v (se %.3g)", s.ID, prior, pNew, pOld, se)
		}
		// The new draws themselves: the flat run keeps them in order.
		raw := set
		raw.VelocityPriorKms, raw.KeepSamples = 0, set.Samples
		rr := eval(s, raw)
		los := newLineOfSight(set.Sun, s.RADeg, s.DecDeg)
		speed, dist, w := make([]float64, rr.Samples), make([]float64, rr.Samples), make([]float64, rr.Samples)
		for i := range speed {
			speed[i] = vec.Norm(rr.SampleVel[i])
			x := rr.SamplePos[i]
			dist[i] = vec.Dot([3]float64{x[0] - los.pos0[0], x[1] - los.pos0[1], x[2] - los.pos0[2]}, los.posR) / vec.Dot(los.posR, los.posR)
			w[i] = 1
			if r.HasRV && prior > 0 {
				w[i] = math.Exp(-speed[i] * speed[i] / (2 * prior * prior))
			}
		}
		oldSpeed := [3]float64{num[13], num[14], num[15]}
		if r.HasRV {
			oldSpeed = [3]float64{num[10], num[11], num[12]}
		}
		for k, q := range percentileLevels {
			for _, c := range []struct {
				name string
				old  float64
				v    []float64
			}{{"speed", oldSpeed[k], speed}, {"distance", num[16+k], dist}} {
				share, nEff := weightedShareBelow(c.v, w, c.old)
				if se := math.Sqrt(2 * q * (1 - q) / nEff); math.Abs(share-q) > z*se {
					t.Errorf("%s prior %g: old %s p%.0f %v sits at %.4f of the new draws (se %.4f)", s.ID, prior, c.name, 100*q, c.old, share, se)
				}
			}
		}
	}
	if rows != 2*len(stars) {
		t.Errorf("%d rows for %d stars x 2 priors", rows, len(stars))
	}
}
