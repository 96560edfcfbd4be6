package weigh

import (
	"context"
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"

	"starvet/galaxy/frames"
	"starvet/galaxy/potential"
	"starvet/internal/parallel"
	"starvet/internal/vec"
)

// ErrTail is wrapped by every FitTail error about its input or options.
var ErrTail = errors.New("velocity tail fit")

// TailStar is one star's Monte Carlo draws: Galactocentric speed (km/s)
// and the radial scale s = v_esc,model(x_d)/v_esc,model(x_sun) of the
// draw's position. Scale may be nil (every s = 1); otherwise it has one
// entry per speed, each >= 0. Weight may be nil (every draw weighs 1);
// otherwise it has one entry per speed, each >= 0 and finite: the density
// of each draw is multiplied by it (NewTailStar sets 1/|v|^2 for draws of
// a three-dimensional velocity).
type TailStar struct {
	ID       string
	SpeedKms []float64
	Scale    []float64
	Weight   []float64
}

// Prior ranges of the power-law slope k.
const (
	// Piffl et al. 2014, A&A 562, A91: k in [2.3, 3.7], the range their
	// simulated haloes span.
	KMinPiffl, KMaxPiffl = 2.3, 3.7
	// Deason et al. 2019, MNRAS 485, 3514 argue for lower slopes in the
	// stellar halo; the range [1, 2.5] is from memory (not checked
	// against the paper).
	KMinDeason, KMaxDeason = 1.0, 2.5
)

// TailOptions controls FitTail. Start from DefaultTailOptions.
type TailOptions struct {
	VMinKms     float64 // lower speed cut of the tail model; draws at or below it have zero density
	VEscMaxKms  float64 // top of the v_esc0 grid
	VEscStepKms float64 // v_esc0 grid step; the grid starts one step above VMinKms
	KMin, KMax  float64 // uniform prior on k
	KStep       float64 // k grid step (KMax-KMin is split into equal steps no larger than this)
	// OutlierMax is the top of the uniform prior on the outlier fraction,
	// tabulated at OutlierSteps equal steps from 0; 0 turns the outlier
	// term off.
	OutlierMax      float64
	OutlierSteps    int
	OutlierSigmaKms float64 // dispersion of the outlier density
	Workers         int     // goroutines over the v_esc0 grid; <= 0: GOMAXPROCS
}

// DefaultTailOptions: v_min = 300 km/s (Deason et al. 2019, MNRAS 485,
// 3514 use 300 km/s, from memory), v_esc0 from 302 to 1200 km/s in 2 km/s
// steps (ours), k uniform on [2.3, 3.7] in 0.05 steps (Piffl et al. 2014),
// outlier fraction uniform on [0, 0.1] at 6 nodes (ours: a tenth of the
// sample is far more contamination than a vetted tail should hold) and an
// outlier dispersion of 1000 km/s (Williams et al. 2017, MNRAS 468, 2359,
// from memory).
func DefaultTailOptions() TailOptions {
	return TailOptions{
		VMinKms:         300,
		VEscMaxKms:      1200,
		VEscStepKms:     2,
		KMin:            KMinPiffl,
		KMax:            KMaxPiffl,
		KStep:           0.05,
		OutlierMax:      0.1,
		OutlierSteps:    6,
		OutlierSigmaKms: 1000,
	}
}

func (o *TailOptions) validate() error {
	bad := func(format string, a ...any) error {
		return fmt.Errorf("%w: %s", ErrTail, fmt.Sprintf(format, a...))
	}
	switch {
	case !vec.Finite(o.VMinKms) || o.VMinKms < 0:
		return bad("v_min %v km/s must be finite and >= 0", o.VMinKms)
	case !(o.VEscStepKms > 0) || !vec.Finite(o.VEscMaxKms) || o.VEscMaxKms < o.VMinKms+o.VEscStepKms:
		return bad("v_esc grid (max %v, step %v km/s) must hold at least one node above v_min %v", o.VEscMaxKms, o.VEscStepKms, o.VMinKms)
	case !(o.KMin >= 0) || !(o.KMax >= o.KMin) || !vec.Finite(o.KMax) || !(o.KStep > 0):
		return bad("k prior [%v, %v] step %v unusable", o.KMin, o.KMax, o.KStep)
	case !(o.OutlierMax >= 0 && o.OutlierMax < 1):
		return bad("outlier max %v must be in [0, 1)", o.OutlierMax)
	case o.OutlierMax > 0 && (o.OutlierSteps < 1 || !(o.OutlierSigmaKms > 0) || !vec.Finite(o.OutlierSigmaKms)):
		return bad("outlier steps %d and dispersion %v km/s must be positive", o.OutlierSteps, o.OutlierSigmaKms)
	}
	return nil
}

// Interval is a posterior median with equal-tailed 68 and 90 per cent
// credible intervals (common practice).
type Interval struct {
	Median, Lo68, Hi68, Lo90, Hi90 float64
}

// TailResult is the posterior of a tail fit.
type TailResult struct {
	VEscKms         Interval // escape speed at the Sun, v_esc0
	K               Interval
	OutlierFraction Interval // zero when the outlier term is off
	Stars           int      // stars with at least one draw above v_min
	Skipped         []string // IDs of stars with no draw above v_min
	// GridVEscKms and Posterior: the marginal posterior of v_esc0 at the
	// grid nodes, normalised to sum 1. GridK and PosteriorK likewise.
	GridVEscKms, Posterior []float64
	GridK, PosteriorK      []float64
	// AtGridTop: the marginal at the top node exceeds 1e-3 of its peak,
	// so the grid cuts the posterior off; raise VEscMaxKms.
	AtGridTop bool
}

// tailData is the flat form of the stars the likelihood loops over.
type tailData struct {
	v, s, w  []float64 // draws above v_min: speed, scale, weight
	start    []int     // star i's draws are v[start[i]:start[i+1]]
	invN     []float64 // 1 / (all draws of star i, kept or not)
	gOut     []float64 // mean outlier density of star i over all its draws
	vMin     float64
	skipped  []string
	hasOutly bool
}

func prepare(stars []TailStar, opt *TailOptions) (*tailData, error) {
	d := &tailData{vMin: opt.VMinKms, start: []int{0}}
	var out distuv.Normal
	var outNorm float64
	if opt.OutlierMax > 0 {
		// Outlier density: a normal of zero mean and dispersion sigma,
		// truncated to v > v_min and renormalised (Williams et al. 2017,
		// MNRAS 468, 2359; the zero mean is from memory).
		out = distuv.Normal{Mu: 0, Sigma: opt.OutlierSigmaKms}
		outNorm = 1 / out.Survival(opt.VMinKms)
		d.hasOutly = true
	}
	for i, st := range stars {
		if st.Scale != nil && len(st.Scale) != len(st.SpeedKms) {
			return nil, fmt.Errorf("%w: star %d (%q): %d scales for %d speeds", ErrTail, i, st.ID, len(st.Scale), len(st.SpeedKms))
		}
		if st.Weight != nil && len(st.Weight) != len(st.SpeedKms) {
			return nil, fmt.Errorf("%w: star %d (%q): %d weights for %d speeds", ErrTail, i, st.ID, len(st.Weight), len(st.SpeedKms))
		}
		var g float64
		kept := 0
		for j, v := range st.SpeedKms {
			s, w := 1.0, 1.0
			if st.Scale != nil {
				s = st.Scale[j]
			}
			if st.Weight != nil {
				w = st.Weight[j]
			}
			// s = 0 (a draw beyond the escape radius) leaves only the
			// outlier term.
			if !vec.Finite(v) || !(s >= 0) || !vec.Finite(s) || !(w >= 0) || !vec.Finite(w) {
				return nil, fmt.Errorf("%w: star %d (%q) draw %d: speed %v km/s, scale %v, weight %v", ErrTail, i, st.ID, j, v, s, w)
			}
			if v <= opt.VMinKms {
				continue
			}
			d.v = append(d.v, v)
			d.s = append(d.s, s)
			d.w = append(d.w, w)
			kept++
			if d.hasOutly {
				g += w * out.Prob(v) * outNorm
			}
		}
		if kept == 0 {
			d.skipped = append(d.skipped, st.ID)
			continue
		}
		n := float64(len(st.SpeedKms))
		d.start = append(d.start, len(d.v))
		d.invN = append(d.invN, 1/n)
		d.gOut = append(d.gOut, g/n)
	}
	if len(d.invN) == 0 {
		return nil, fmt.Errorf("%w: no star has a draw above v_min = %v km/s", ErrTail, opt.VMinKms)
	}
	return d, nil
}

// tailGrid holds the axes and the log-likelihood on them,
// logL[(j*nK+ik)*nF+iF] for v_esc0 node j, k node ik, f_out node iF.
type tailGrid struct {
	vEsc, k, f []float64
	logL       []float64
}

func linspace(lo, hi float64, n int) []float64 {
	x := make([]float64, n)
	for i := range x {
		if n == 1 {
			x[i] = lo
		} else {
			x[i] = lo + (hi-lo)*float64(i)/float64(n-1)
		}
	}
	return x
}

func axes(opt *TailOptions) (vEsc, k, f []float64) {
	nV := int(math.Floor((opt.VEscMaxKms-opt.VMinKms)/opt.VEscStepKms + 1e-9))
	vEsc = make([]float64, nV)
	for j := range vEsc {
		vEsc[j] = opt.VMinKms + float64(j+1)*opt.VEscStepKms
	}
	nK := int(math.Ceil((opt.KMax-opt.KMin)/opt.KStep-1e-9)) + 1
	k = linspace(opt.KMin, opt.KMax, nK)
	f = []float64{0}
	if opt.OutlierMax > 0 {
		f = linspace(0, opt.OutlierMax, opt.OutlierSteps+1)
	}
	return vEsc, k, f
}

// logLikelihood tabulates sum_i ln L_i on the grid, where L_i is the mean
// over star i's draws of w_d [(1 - f) f_LT(v_d | v_esc0 s_d, k) + f g(v_d)].
func logLikelihood(d *tailData, opt *TailOptions) *tailGrid {
	vEsc, ks, fs := axes(opt)
	nK, nF := len(ks), len(fs)
	g := &tailGrid{vEsc: vEsc, k: ks, f: fs, logL: make([]float64, len(vEsc)*nK*nF)}
	kMin := ks[0]
	dk := 0.0
	if nK > 1 {
		dk = ks[1] - ks[0]
	}
	vMin := d.vMin
	type scratch struct{ a, prod, acc []float64 }
	// One v_esc0 node per batch item: the work per node is the same, and
	// the worker's scratch holds the per-k sums of one star.
	_ = parallel.Batches(context.Background(), len(vEsc), 4, opt.Workers, func(sc *scratch, lo, hi int) {
		if sc.a == nil {
			sc.a = make([]float64, nK)
			sc.prod = make([]float64, nK*nF)
			sc.acc = make([]float64, nK*nF)
		}
		for j := lo; j < hi; j++ {
			v0 := vEsc[j]
			for i := range sc.prod {
				sc.prod[i], sc.acc[i] = 1, 0
			}
			for i := range d.invN {
				a := sc.a
				clear(a)
				for t := d.start[i]; t < d.start[i+1]; t++ {
					ve := v0 * d.s[t]
					v := d.v[t]
					if ve <= v {
						continue
					}
					// f_LT = (k+1) (ve - v)^k / (ve - v_min)^(k+1)
					// (Leonard & Tremaine 1990, ApJ 353, 486) =
					// (k+1) r^k / (ve - v_min) with r = (ve-v)/(ve-v_min);
					// r^k over the k grid by repeated products of r^dk.
					span := ve - vMin
					lr := math.Log((ve - v) / span)
					p := d.w[t] * math.Exp(kMin*lr) / span
					q := math.Exp(dk * lr)
					// Two interleaved chains halve the latency of the
					// dependent products.
					p1, q2 := p*q, q*q
					ik := 0
					for ; ik+1 < len(a); ik += 2 {
						a[ik] += p
						a[ik+1] += p1
						p *= q2
						p1 *= q2
					}
					if ik < len(a) {
						a[ik] += p
					}
				}
				gi := d.gOut[i]
				for ik, k := range ks {
					ai := a[ik] * (k + 1) * d.invN[i]
					row := ik * nF
					for iF, f := range fs {
						// Products of densities, folded into the log
						// sum before they underflow.
						p := sc.prod[row+iF] * ((1-f)*ai + f*gi)
						if p < 1e-250 {
							sc.acc[row+iF] += math.Log(p)
							p = 1
						}
						sc.prod[row+iF] = p
					}
				}
			}
			out := g.logL[j*nK*nF : (j+1)*nK*nF]
			for i := range out {
				out[i] = sc.acc[i] + math.Log(sc.prod[i])
			}
		}
	}, nil)
	return g
}

// trapezoid returns trapezoid-rule weights on n equal steps (the uniform
// prior integrated over the axis; 1 for a single node).
func trapezoid(n int) []float64 {
	w := make([]float64, n)
	for i := range w {
		w[i] = 1
	}
	if n > 1 {
		w[0], w[n-1] = 0.5, 0.5
	}
	return w
}

func interval(x, w []float64) Interval {
	q := func(p float64) float64 { return stat.Quantile(p, stat.LinInterp, x, w) }
	return Interval{Median: q(0.5), Lo68: q(0.16), Hi68: q(0.84), Lo90: q(0.05), Hi90: q(0.95)}
}

// FitTail infers the escape speed at the Sun from the stars' speed draws.
// A star's likelihood is the mean over all its draws of the mixture
// density times the draw's weight (draws at or below v_min count as zero):
// the measurement errors are folded in by Monte Carlo (common practice).
// Draws of a speed drawn with a flat prior on the speed itself need no
// weight; draws of a velocity vector drawn with a flat prior on the vector
// need 1/|v|^2 (NewTailStar), because an isotropic population with speed
// density f(v) has density f(|v|) / (4 pi |v|^2) per unit volume of
// velocity space (the volume of the shell, 4 pi v^2 dv): without it the
// average weighs each draw by the shell it stands for and favours fast
// draws, which biases v_esc0 upward as the errors grow. Priors: v_esc0 flat
// on the grid, k and the outlier fraction uniform on their ranges.
func FitTail(stars []TailStar, opt TailOptions) (*TailResult, error) {
	if err := opt.validate(); err != nil {
		return nil, err
	}
	d, err := prepare(stars, &opt)
	if err != nil {
		return nil, err
	}
	g := logLikelihood(d, &opt)
	nV, nK, nF := len(g.vEsc), len(g.k), len(g.f)
	peak := math.Inf(-1)
	for _, l := range g.logL {
		peak = max(peak, l)
	}
	if math.IsInf(peak, -1) || math.IsNaN(peak) {
		return nil, fmt.Errorf("%w: the likelihood is zero on the whole grid (a star faster than v_esc0 = %v km/s times its scale, and no outlier term?)", ErrTail, opt.VEscMaxKms)
	}
	wK, wF := trapezoid(nK), trapezoid(nF)
	pV, pK, pF := make([]float64, nV), make([]float64, nK), make([]float64, nF)
	for j := range nV {
		for ik := range nK {
			for iF := range nF {
				p := wK[ik] * wF[iF] * math.Exp(g.logL[(j*nK+ik)*nF+iF]-peak)
				pV[j] += p
				pK[ik] += p
				pF[iF] += p
			}
		}
	}
	norm := func(p []float64) []float64 {
		var s float64
		for _, x := range p {
			s += x
		}
		for i := range p {
			p[i] /= s
		}
		return p
	}
	// pK and pF carry the trapezoid weight of their own node: divide it out
	// before treating them as masses at the nodes, as pV is.
	for ik := range pK {
		pK[ik] /= wK[ik]
	}
	for iF := range pF {
		pF[iF] /= wF[iF]
	}
	norm(pV)
	norm(pK)
	norm(pF)
	r := &TailResult{
		VEscKms:     interval(g.vEsc, pV),
		K:           interval(g.k, pK),
		Stars:       len(d.invN),
		Skipped:     d.skipped,
		GridVEscKms: g.vEsc,
		Posterior:   pV,
		GridK:       g.k,
		PosteriorK:  pK,
	}
	if d.hasOutly {
		r.OutlierFraction = interval(g.f, pF)
	}
	var top float64
	for _, p := range pV {
		top = max(top, p)
	}
	r.AtGridTop = pV[nV-1] > 1e-3*top
	return r, nil
}

// SunPositionKpc is the Sun's Galactocentric position for these Solar
// parameters: the point at distance 0 in frames.Sun.ToGalactocentric.
func SunPositionKpc(sun frames.Sun) [3]float64 {
	pos, _ := sun.ToGalactocentric(frames.Basis{}, 0, 0, 0, 0)
	return pos
}

// NewTailStar builds a TailStar from Monte Carlo positions (kpc) and
// velocities (km/s), such as kinematics.Result.SamplePos and SampleVel,
// drawn with a flat prior on the velocity vector: speed |v|, scale
// v_esc(x)/v_esc(x_sun) in model m with the escape radius escapeRadiusKpc
// (0: infinity; potential.Model.EscapeSpeed) and weight (v_esc(x_sun)/|v|)^2,
// the inverse of the volume of velocity space per unit speed (FitTail; the
// constant factor is the same for every draw and cancels).
func NewTailStar(id string, posKpc, velKms [][3]float64, m *potential.Model, sunKpc [3]float64, escapeRadiusKpc float64) (TailStar, error) {
	if len(posKpc) != len(velKms) {
		return TailStar{}, fmt.Errorf("%w: star %q: %d positions for %d velocities", ErrTail, id, len(posKpc), len(velKms))
	}
	sunEsc := m.EscapeSpeed(sunKpc, escapeRadiusKpc)
	if !(sunEsc > 0) {
		return TailStar{}, fmt.Errorf("%w: escape speed at the Sun is %v km/s", ErrTail, sunEsc)
	}
	st := TailStar{ID: id, SpeedKms: make([]float64, len(posKpc)), Scale: make([]float64, len(posKpc)), Weight: make([]float64, len(posKpc))}
	for i := range posKpc {
		v := vec.Norm(velKms[i])
		st.SpeedKms[i] = v
		st.Scale[i] = m.EscapeSpeed(posKpc[i], escapeRadiusKpc) / sunEsc
		if v > 0 {
			st.Weight[i] = (sunEsc / v) * (sunEsc / v)
		}
	}
	return st, nil
}
