package estimate

import (
	"fmt"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/mat"

	"rigwire/estimate/simstep"
	"rigwire/profiles"
	"rigwire/profiles/laws"
	"rigwire/profiles/markov"
)

// SimOptions sets up a Monte-Carlo run of a loop.
type SimOptions struct {
	Options
	Periods int    // periods per run, > Warmup
	Runs    int    // independent runs, ≥ 2 for a standard error
	Warmup  int    // periods discarded at the start of each run
	Seed    uint64 // run r draws from PCG(Seed, r)
	// Paths is the number of runs (the first ones) whose error paths are
	// kept in the result.
	Paths int
	// Progress, if set, is called after each run.
	Progress func(done, total int)
	// OnSample, if set, is called with every counted sample (after the
	// warm-up and, with a sinusoidal reference, outside each dwell's
	// settling, which the averages leave out too) of every run: its period k, the reference r_k and the
	// outputs y_k = r_k − e_k. The slices are reused.
	OnSample func(run, k int, r, y []float64)
}

// PathPoint is one period of a recorded sample path.
type PathPoint struct {
	K     int
	Error []float64 // e_k = r − y_k
	Mode  int       // 0, 1, 2 as in estimate/model.md §1; −1 with horizons above one period (§13), which have no such modes
	Tau   float64   // total delay of a delivered command (mode 2), else NaN
	State int       // joint network state index
}

// SimResult is the Monte-Carlo estimate of the steady E[eᵀe].
type SimResult struct {
	// SecondMoment is the mean over runs of each run's time average of
	// e_kᵀe_k over its periods after the warm-up.
	SecondMoment float64
	// StdErr is the standard error of SecondMoment across the independent
	// runs (sample standard deviation of the run averages / √runs).
	StdErr float64
	// RunMeans are the runs' time averages.
	RunMeans []float64
	// ModeCounts counts the periods in each mode over all runs (a
	// one-period horizon only).
	ModeCounts [3]int
	// ErrorMean and ErrorSquare are the time averages of e_k and of its
	// entries squared after the warm-up over all runs, per output.
	ErrorMean, ErrorSquare []float64
	// CommandAge[d] is the share of periods (after the warm-up) that end
	// with the actuator running on a command d periods old, d below the
	// command horizon; Stale the share that end on an older one or none
	// (estimate/model.md §13, as TimingReport).
	CommandAge []float64
	Stale      float64
	Paths      [][]PathPoint
}

// Simulate runs the loop's jump system period by period (estimate/model.md §1),
// written from the rig's timing rather than from the modes' matrices so
// that it checks them: each period the joint network state moves by
// P = P_sc ⊗ P_ca, a sample is lost with the sensor state's probability or
// drawn a delay by the profile's own Sample, a sample at least h late is
// stale; a used sample advances the controller and sends a command that
// is lost or drawn a delay in turn, and a command with τ ≥ h is late. The
// plant moves by its exact sampling over the period with the input switch
// at τ (Φ, Γ0(τ), Γ1(τ) from one matrix exponential per delivered command)
// and process noise w ~ N(0, W_d); the sensor noise v ~ N(0, V). The
// step's arithmetic (the noise draws, the plant's free motion, the
// controller's update) is estimate/simstep's, the same the simulated rig
// (emulate/rig) runs.
func Simulate(loop *profiles.Loop, opts SimOptions) (*SimResult, error) {
	if opts.Periods <= opts.Warmup || opts.Warmup < 0 {
		return nil, fmt.Errorf("periods: want more than the warm-up (%d), got %d", opts.Warmup, opts.Periods)
	}
	if opts.Runs < 1 {
		return nil, fmt.Errorf("runs: want at least 1, got %d", opts.Runs)
	}
	md, err := buildBase(loop, opts.Options) // for the chain and the scaled delays
	if err != nil {
		return nil, err
	}
	sim := newSimulator(md)
	sim.onSample = opts.OnSample
	ns, na := loop.Horizons()
	_, _, p, _ := loop.Dims()
	res := &SimResult{}
	errAcc := make([]float64, 2*p) // Σ e, then Σ e²
	ages := make([]int, na+1)
	for r := 0; r < opts.Runs; r++ {
		rng := rand.New(rand.NewPCG(opts.Seed, uint64(r)))
		sim.runIndex, sim.nCounted = r, 0
		var path *[]PathPoint
		if r < opts.Paths {
			res.Paths = append(res.Paths, nil)
			path = &res.Paths[len(res.Paths)-1]
		}
		var m float64
		if ns == 1 && na == 1 {
			m = sim.run(rng, opts.Periods, opts.Warmup, path, &res.ModeCounts, errAcc)
		} else {
			m = sim.runLong(rng, opts.Periods, opts.Warmup, ns, na, errAcc, ages, path)
		}
		if sim.nCounted == 0 {
			return nil, fmt.Errorf("run %d: no sample counted: the %d periods after the warm-up all fall in the reference's settling (key reference.settle); simulate more periods", r, opts.Periods-opts.Warmup)
		}
		res.RunMeans = append(res.RunMeans, m)
		sim.totalCounted += sim.nCounted
		if opts.Progress != nil {
			opts.Progress(r+1, opts.Runs)
		}
	}
	sum := 0.0
	for _, m := range res.RunMeans {
		sum += m
	}
	res.SecondMoment = sum / float64(len(res.RunMeans))
	counted := float64(sim.totalCounted)
	res.ErrorMean, res.ErrorSquare = make([]float64, p), make([]float64, p)
	for i := 0; i < p; i++ {
		res.ErrorMean[i] = errAcc[i] / counted
		res.ErrorSquare[i] = errAcc[p+i] / counted
	}
	res.CommandAge = make([]float64, na)
	if ns == 1 && na == 1 {
		// One period: a period ends on its own command when it was
		// delivered in time (mode 2), else on a stale one.
		ages[0] = res.ModeCounts[2]
		ages[1] = res.ModeCounts[0] + res.ModeCounts[1]
		counted = float64(ages[0] + ages[1])
	} else {
		counted = float64(opts.Runs * (opts.Periods - opts.Warmup)) // every period after the warm-up ends on some command
	}
	for d := 0; d < na; d++ {
		res.CommandAge[d] = float64(ages[d]) / counted
	}
	res.Stale = float64(ages[na]) / counted
	if len(res.RunMeans) > 1 {
		ss := 0.0
		for _, m := range res.RunMeans {
			ss += (m - res.SecondMoment) * (m - res.SecondMoment)
		}
		res.StdErr = math.Sqrt(ss / float64(len(res.RunMeans)-1) / float64(len(res.RunMeans)))
	} else {
		res.StdErr = math.NaN()
	}
	return res, nil
}

type simulator struct {
	md             *Model
	moving         bool      // the reference is sinusoidal: r is set per sample
	r, y           []float64 // r_k, and y_k for onSample
	onSample       func(run, k int, r, y []float64)
	runIndex       int
	nCounted       int // samples counted in the current run
	totalCounted   int // and in all runs so far
	n, m, p, nc    int
	h              float64
	comp           laws.Delay // the compute delay c, drawn for every command
	zero           bool
	phi, gam       *mat.Dense
	cp             *mat.Dense
	ctl            profiles.Controller
	wFac, vFac     *mat.Dense // noise factors: L Lᵀ = covariance
	psc, pca       *mat.Dense
	pisc, pica     []float64
	sc, ca         []markov.State
	delaySC        []laws.Delay
	delayCA        []laws.Delay
	lossSC, lossCA []float64   // extra loss included
	rowsSC, rowsCA [][]float64 // rows of the transition matrices
	split          map[float64][2]*mat.Dense
}

func newSimulator(md *Model) *simulator {
	l := md.Loop
	n, m, p, nc := l.Dims()
	s := &simulator{md: md, n: n, m: m, p: p, nc: nc, h: l.Period, comp: l.Compute,
		zero: l.Actuator.OnLoss == profiles.ZeroUnlessFresh,
		phi:  md.lm.samp.Phi, gam: md.lm.samp.Gamma, cp: l.Plant.C,
		ctl: l.Controller,
		r:   append([]float64(nil), l.Setpoint...), split: map[float64][2]*mat.Dense{},
		moving: l.Reference.Sinusoidal(), y: make([]float64, p),
	}
	if s.comp == nil {
		s.comp = laws.Constant{Value: 0}
	}
	s.wFac = simstep.Factor(md.lm.samp.Wd)
	s.vFac = simstep.Factor(l.Plant.V)
	prof := l.Profile
	s.psc, s.pca = prof.SensorToController.Transition(l.Period), prof.ControllerToActuator.Transition(l.Period)
	s.pisc, s.pica = prof.SensorToController.Stationary(), prof.ControllerToActuator.Stationary()
	s.sc, s.ca = prof.SensorToController.States, prof.ControllerToActuator.States
	q := md.opts.ExtraLoss
	for i, st := range s.sc {
		s.delaySC = append(s.delaySC, scaleDelay(st.Delay, md.opts.DelayScale))
		s.lossSC = append(s.lossSC, st.Loss+(1-st.Loss)*q)
		s.rowsSC = append(s.rowsSC, mat.Row(nil, i, s.psc))
	}
	for i, st := range s.ca {
		s.delayCA = append(s.delayCA, scaleDelay(st.Delay, md.opts.DelayScale))
		s.lossCA = append(s.lossCA, st.Loss+(1-st.Loss)*q)
		s.rowsCA = append(s.rowsCA, mat.Row(nil, i, s.pca))
	}
	return s
}

func draw(r *rand.Rand, row []float64) int {
	u := r.Float64()
	for j, p := range row {
		u -= p
		if u < 0 {
			return j
		}
	}
	return len(row) - 1
}

func (s *simulator) gammas(tau float64) (g0, g1 *mat.Dense) {
	if v, ok := s.split[tau]; ok {
		return v[0], v[1]
	}
	g0, g1 = s.md.lm.samp.Split(tau)
	if len(s.split) < 4096 {
		s.split[tau] = [2]*mat.Dense{g0, g1}
	}
	return g0, g1
}

// sample takes the period's sample, y = C x + v, into e = r − y (v is
// scratch for the sensor noise, std for the normal draws) and, when
// counted, adds eᵀe to sum and e and its squares to acc (p entries each).
func (s *simulator) sample(rng *rand.Rand, k int, x, e, v, std []float64, counted bool, sum *float64, acc []float64) {
	p := len(e)
	if s.moving {
		// Each dwell's settling is left out, as the monitor leaves it out:
		// the prediction is the periodic steady state.
		if _, _, settling := s.md.Loop.ReferenceAt(uint64(k), s.r); settling {
			counted = false
		}
	}
	if counted {
		s.nCounted++
	}
	simstep.Noise(v, s.vFac, rng, std)
	simstep.MulVec(e, s.cp, x, false)
	ee := 0.0
	for i := 0; i < p; i++ {
		e[i] = s.r[i] - e[i] - v[i]
		ee += e[i] * e[i]
	}
	if counted && s.onSample != nil {
		for i := 0; i < p; i++ {
			s.y[i] = s.r[i] - e[i]
		}
		s.onSample(s.runIndex, k, s.r, s.y)
	}
	if counted {
		*sum += ee
		for i := 0; i < p; i++ {
			acc[i] += e[i]
			acc[p+i] += e[i] * e[i]
		}
	}
}

// run simulates one run and returns its time average of eᵀe after the
// warm-up.
func (s *simulator) run(rng *rand.Rand, periods, warmup int, path *[]PathPoint, counts *[3]int, errSum []float64) float64 {
	n, m, p, nc := s.n, s.m, s.p, s.nc
	x := make([]float64, n)
	uHeld := make([]float64, m)
	xc := make([]float64, nc)
	e := make([]float64, p)
	v := make([]float64, p)
	u := make([]float64, m)
	xn := make([]float64, n)
	xcn := make([]float64, nc)
	std := make([]float64, max(n, p))
	isc := draw(rng, s.pisc)
	ica := draw(rng, s.pica)
	sum := 0.0
	for k := 0; k < periods; k++ {
		s.sample(rng, k, x, e, v, std, k >= warmup, &sum, errSum)
		// Network and controller.
		mode, tau := 0, math.NaN()
		if rng.Float64() >= s.lossSC[isc] {
			tsc := s.delaySC[isc].Sample(rng)
			if tsc < s.h {
				mode = 1
				// u_k = Cc xc + Dc e; xc' = Ac xc + Bc e.
				simstep.Controller(s.ctl, xc, xcn, e, u)
				if rng.Float64() >= s.lossCA[ica] {
					t := tsc + s.delayCA[ica].Sample(rng) + s.comp.Sample(rng)
					if t < s.h {
						mode, tau = 2, t
					}
				}
			}
		}
		counts[mode]++
		// Plant over the period.
		simstep.Plant(xn, s.phi, x, s.wFac, rng, std)
		switch {
		case mode == 2:
			g0, g1 := s.gammas(tau)
			simstep.MulVec(xn, g0, u, true)
			if !s.zero {
				simstep.MulVec(xn, g1, uHeld, true)
				copy(uHeld, u)
			}
		case !s.zero:
			simstep.MulVec(xn, s.gam, uHeld, true)
		}
		copy(x, xn)
		if path != nil {
			*path = append(*path, PathPoint{K: k, Error: append([]float64(nil), e...), Mode: mode, Tau: tau,
				State: isc*len(s.ca) + ica})
		}
		isc = draw(rng, s.rowsSC[isc])
		ica = draw(rng, s.rowsCA[ica])
	}
	return sum / float64(s.nCounted)
}
