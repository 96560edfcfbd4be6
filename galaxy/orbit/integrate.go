package orbit

import (
	"math"

	"starvet/galaxy/potential"
)

// Options controls the integrator. Zero fields take the defaults below.
type Options struct {
	// Eta scales the step to the local dynamical time:
	// dt = Eta * min(r/|v|, sqrt(r/|a|)). Default 0.01.
	Eta float64
	// MinStepMyr and MaxStepMyr clamp the step. Defaults 1e-3 and 2 Myr.
	// The floor only matters within ~parsecs of a singular or cusped centre.
	MinStepMyr, MaxStepMyr float64
	// IterateStep makes the symmetric step use a trial leapfrog step for the
	// end state (two force evaluations per step) instead of a Taylor
	// prediction (one).
	IterateStep bool
}

// Defaults for Options.
const (
	DefaultEta        = 0.01
	DefaultMinStepMyr = 1e-3
	DefaultMaxStepMyr = 2.0
)

func (o Options) withDefaults() Options {
	if !(o.Eta > 0) {
		o.Eta = DefaultEta
	}
	if !(o.MinStepMyr > 0) {
		o.MinStepMyr = DefaultMinStepMyr
	}
	if !(o.MaxStepMyr > 0) {
		o.MaxStepMyr = DefaultMaxStepMyr
	}
	if o.MaxStepMyr < o.MinStepMyr {
		o.MaxStepMyr = o.MinStepMyr
	}
	return o
}

// state is a phase-space point with its cached acceleration; t in internal
// units kpc/(km/s).
type state struct {
	t    float64
	x, v [3]float64
	a    [3]float64
}

type stepper struct {
	p          potential.Potential
	eta        float64
	hMin, hMax float64 // internal units, > 0
	dir        float64 // +1 forward, -1 backward
	iterate    bool
	evals      int // force evaluations, for benchmarks and tests
}

func newStepper(p potential.Potential, opt Options, dir float64) stepper {
	opt = opt.withDefaults()
	return stepper{
		p:       p,
		eta:     opt.Eta,
		hMin:    opt.MinStepMyr / potential.TimeUnitMyr,
		hMax:    opt.MaxStepMyr / potential.TimeUnitMyr,
		dir:     dir,
		iterate: opt.IterateStep,
	}
}

// timescale is the unsigned step wanted at s, clamped; NaN for a
// non-finite state. It works with squares, h^2 = Eta^2 min(r^2/v^2, r/|a|),
// to save square roots in the hot loop.
func (st *stepper) timescale(s *state) float64 {
	r2 := s.x[0]*s.x[0] + s.x[1]*s.x[1] + s.x[2]*s.x[2]
	v2 := s.v[0]*s.v[0] + s.v[1]*s.v[1] + s.v[2]*s.v[2]
	a2 := s.a[0]*s.a[0] + s.a[1]*s.a[1] + s.a[2]*s.a[2]
	if math.IsNaN(r2 + v2 + a2) {
		return math.NaN()
	}
	t2 := math.Inf(1) // (r/v)^2, then min with r/a
	if v2 > 0 {
		t2 = r2 / v2
	}
	if a2 > 0 {
		if q := math.Sqrt(r2 / a2); q < t2 {
			t2 = q
		}
	}
	h := st.eta * math.Sqrt(t2)
	if !(h >= st.hMin) { // also r = 0
		return st.hMin
	}
	if h > st.hMax {
		return st.hMax
	}
	return h
}

// kdk is one kick-drift-kick leapfrog step of signed length h (the velocity
// form of Verlet 1967, Phys. Rev. 159, 98): v += a h/2; x += v h;
// a = a(x); v += a h/2.
func (st *stepper) kdk(s *state, h float64, out *state) {
	hh := 0.5 * h
	var x, v [3]float64
	for i := range 3 {
		v[i] = s.v[i] + hh*s.a[i]
		x[i] = s.x[i] + h*v[i]
	}
	a := st.p.Accel(x)
	st.evals++
	for i := range 3 {
		v[i] += hh * a[i]
	}
	out.t, out.x, out.v, out.a = s.t+h, x, v, a
}

// step advances s by one time-symmetric adaptive step, but not past the
// signed end time tEnd. The step length is h = (tau(start) + tau(end))/2
// (Hut, Makino & McMillan 1995, ApJ 443, L93), an implicit rule that we
// close with one fixed-point pass: the end state entering tau comes from a
// second-order Taylor prediction x + v h + a h^2/2, v + a h with the start
// acceleration (one force evaluation per step), or with IterateStep from a
// trial leapfrog step (two). Both leave a reversibility defect of higher
// order than the leapfrog error; the tests measure it. It returns true when
// tEnd was reached.
func (st *stepper) step(s *state, tEnd float64) bool {
	t0 := st.timescale(s)
	if math.IsNaN(t0) {
		// Non-finite state: end at once rather than stepping NaNs.
		nan := math.NaN()
		s.t, s.x, s.v = tEnd, [3]float64{nan, nan, nan}, [3]float64{nan, nan, nan}
		return true
	}
	var trial state
	if st.iterate {
		st.kdk(s, st.dir*t0, &trial)
	} else {
		// Taylor prediction of the end state without a force evaluation.
		h0 := st.dir * t0
		for i := range 3 {
			trial.x[i] = s.x[i] + h0*(s.v[i]+0.5*h0*s.a[i])
			trial.v[i] = s.v[i] + h0*s.a[i]
		}
		trial.a = s.a
	}
	h := 0.5 * (t0 + st.timescale(&trial))
	remaining := (tEnd - s.t) * st.dir
	last := false
	if h >= remaining {
		h, last = remaining, true
	}
	st.kdk(s, st.dir*h, &trial)
	if last {
		trial.t = tEnd
	}
	*s = trial
	return last
}

func (st *stepper) start(x, v [3]float64) state {
	st.evals++
	return state{x: x, v: v, a: st.p.Accel(x)}
}

// Integrate integrates the orbit from (x kpc, v km/s) at t = 0 for tMyr
// (negative integrates backward in time), calling visit at the start and
// after every step with the time in Myr (same sign as tMyr) and the state.
// It stops early when visit returns false. The last step is shortened to
// end exactly at tMyr. A non-finite start or state jumps to tMyr with a NaN
// state.
//
// Steps are kick-drift-kick leapfrog with the time-symmetric adaptive step
// of Hut, Makino & McMillan (1995, ApJ 443, L93): dt = Eta*min(r/|v|,
// sqrt(r/|a|)) averaged between the ends of the step. The local dynamical
// time shrinks the step where a fast star passes near the centre and lets it
// grow in the outer halo; the symmetric choice keeps the scheme
// time-reversible, so energy errors stay bounded instead of drifting.
func Integrate(p potential.Potential, x, v [3]float64, tMyr float64, opt Options, visit func(tMyr float64, x, v [3]float64) bool) {
	dir := 1.0
	if tMyr < 0 {
		dir = -1
	}
	st := newStepper(p, opt, dir)
	s := st.start(x, v)
	if !visit(0, s.x, s.v) || tMyr == 0 {
		return
	}
	tEnd := tMyr / potential.TimeUnitMyr
	for {
		last := st.step(&s, tEnd)
		t := s.t * potential.TimeUnitMyr
		if last {
			t = tMyr
		}
		if !visit(t, s.x, s.v) || last {
			return
		}
	}
}

// Advance returns the state after tMyr (negative: backward) starting from
// (x kpc, v km/s). It is Integrate without the per-step callback.
func Advance(p potential.Potential, x, v [3]float64, tMyr float64, opt Options) ([3]float64, [3]float64) {
	if tMyr == 0 {
		return x, v
	}
	dir := 1.0
	if tMyr < 0 {
		dir = -1
	}
	st := newStepper(p, opt, dir)
	s := st.start(x, v)
	tEnd := tMyr / potential.TimeUnitMyr
	for !st.step(&s, tEnd) {
	}
	return s.x, s.v
}
