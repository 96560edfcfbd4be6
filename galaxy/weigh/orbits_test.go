package weigh

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"

	"starvet/galaxy/orbit"
	"starvet/galaxy/potential"
)

func defaultModel(t testing.TB) *potential.Model {
	t.Helper()
	m, err := potential.Builtin(potential.DefaultModel)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// ejectee invents a star launched from within 0.1 kpc of the centre in a
// random direction at 800-1500 km/s and flown forward 10-80 Myr in p.
func ejectee(rng *rand.Rand, p potential.Potential) (x, v [3]float64) {
	dir := randomDirection(rng)
	off := randomDirection(rng)
	r0 := 0.1 * math.Cbrt(rng.Float64())
	speed := 800 + 700*rng.Float64()
	for k := range 3 {
		x[k] = r0 * off[k]
		v[k] = speed * dir[k]
	}
	return orbit.Advance(p, x, v, 10+70*rng.Float64(), orbit.Options{})
}

func randomDirection(rng *rand.Rand) [3]float64 {
	z := 2*rng.Float64() - 1
	phi := 2 * math.Pi * rng.Float64()
	s := math.Sqrt(1 - z*z)
	return [3]float64{s * math.Cos(phi), s * math.Sin(phi), z}
}

// draws scatters n Monte Carlo draws around (x, v) with fractional Gaussian
// errors fracX on each position axis and fracV on each velocity axis,
// relative to |x| and |v|.
func draws(rng *rand.Rand, id string, x, v [3]float64, n int, fracX, fracV float64) OrbitStar {
	sx := fracX * math.Sqrt(x[0]*x[0]+x[1]*x[1]+x[2]*x[2])
	sv := fracV * math.Sqrt(v[0]*v[0]+v[1]*v[1]+v[2]*v[2])
	s := OrbitStar{ID: id}
	for range n {
		var xs, vs [3]float64
		for k := range 3 {
			xs[k] = x[k] + sx*rng.NormFloat64()
			vs[k] = v[k] + sv*rng.NormFloat64()
		}
		s.PosKpc = append(s.PosKpc, xs)
		s.VelKms = append(s.VelKms, vs)
	}
	return s
}

// ejecteeSet invents nStars ejectees in the default model with its halo
// scaled by trueScale, each with nDraws draws.
func ejecteeSet(t testing.TB, rng *rand.Rand, trueScale float64, nStars, nDraws int, fracX, fracV float64) []OrbitStar {
	t.Helper()
	truth, err := scaledHalo(defaultModel(t), trueScale)
	if err != nil {
		t.Fatal(err)
	}
	out := make([]OrbitStar, nStars)
	for i := range out {
		x, v := ejectee(rng, truth)
		out[i] = draws(rng, "ej", x, v, nDraws, fracX, fracV)
	}
	return out
}

func TestExplore(t *testing.T) {
	for _, ts := range []float64{0.5, 1, 2} {
		for seed := uint64(1); seed <= 3; seed++ {
			rng := rand.New(rand.NewPCG(seed, uint64(ts*100)))
			stars := ejecteeSet(t, rng, ts, 25, 40, 0.02, 0.01)
			for _, sc := range []Score{ScoreCrossings, ScoreEjection} {
				res, err := FitOrbits(context.Background(), defaultModel(t), stars, OrbitOptions{Score: sc, EjectionSpeedPDF: UniformSpeedPDF(800, 1500)})
				if err != nil {
					t.Fatal(err)
				}
				t.Logf("true %.2f score %v best %.3f 68%% [%.3f %.3f] 90%% [%.3f %.3f] edge %v stars %d carrying %d", ts, sc, res.Best, res.Lo68, res.Hi68, res.Lo90, res.Hi90, res.AtEdge, res.Stars, res.Carrying)
			}
		}
	}
}
