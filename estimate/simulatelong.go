package estimate

import (
	"math"
	"math/rand/v2"
	"sort"

	"rigwire/estimate/simstep"
)

// The Monte Carlo of a loop with horizons above one period
// (estimate/model.md §13), written from the rig's rules event by event
// rather than from the chain, so that it checks the chain — and answers
// for the loops the chain does not cover.

// flight is a sample or a command on its way: its sequence number k, its
// age on arrival τ (seconds since t_k) and its value (the error e_k of a
// sample, the command u_k).
type flight struct {
	seq   int
	tau   float64
	val   []float64
	at    int     // the period it arrives in
	off   float64 // its offset within that period
	valid bool
}

// landing places an age τ of sequence k in period k + ⌊τ/h⌋ at the
// offset that remains, computed from τ rather than from absolute times so
// that no rounding of k·h moves it.
func landing(k int, tau, h float64) (int, float64) {
	j := int(math.Floor(tau / h))
	off := tau - float64(j)*h
	if off >= h { // rounding
		j, off = j+1, 0
	}
	if off < 0 {
		off = 0
	}
	return k + j, off
}

// longRun holds the reusable buffers of one simulated run.
type longRun struct {
	samples, commands []flight
	order             []int
}

// runLong simulates one run under the timing policy (ns, na): per period,
// the sample is lost or delayed; the controller takes the samples that
// arrive in the period in arrival order, using one only if it is younger
// than ns periods and newer than the last it used, and sends its command
// after c; the actuator applies, in arrival order, every command younger
// than na periods and newer than the last it applied, and holds it; the
// plant moves by its exact sampling with each input change at its own
// offset, x' = Φ x + w + Γ u_held + Σ Γ0(a)(u_new − u_old). A channel's
// state is drawn per period; a packet takes the state of the period it is
// sent in. It adds to ages the periods that end with the command in
// force d periods old (d < na) or older (ages[na]).
func (s *simulator) runLong(rng *rand.Rand, periods, warmup, ns, na int, errSum []float64, ages []int, path *[]PathPoint) float64 {
	n, m, p := s.n, s.m, s.p
	h := s.h
	x := make([]float64, n)
	xn := make([]float64, n)
	xc := make([]float64, s.nc)
	xcn := make([]float64, s.nc)
	uHeld := make([]float64, m)
	e := make([]float64, p)
	v := make([]float64, p)
	std := make([]float64, max(n, p))
	var lr longRun
	lastUsed, lastApplied := -1, -1
	isc := draw(rng, s.pisc)
	ica := draw(rng, s.pica)
	sum := 0.0
	for k := 0; k < periods; k++ {
		s.sample(rng, k, x, e, v, std, k >= warmup, &sum, errSum)
		if rng.Float64() >= s.lossSC[isc] {
			if tau := s.delaySC[isc].Sample(rng); tau < float64(ns)*h {
				lr.samples = addFlight(lr.samples, k, tau, e, h)
			}
		}
		// The controller, in arrival order.
		for _, i := range lr.arrivals(lr.samples, k) {
			f := &lr.samples[i]
			f.valid = false
			if f.seq <= lastUsed {
				continue // older than, or the same as, the last one used
			}
			lastUsed = f.seq
			u := make([]float64, m)
			simstep.Controller(s.ctl, xc, xcn, f.val, u)
			if rng.Float64() >= s.lossCA[ica] {
				if tau := f.tau + s.comp.Sample(rng) + s.delayCA[ica].Sample(rng); tau < float64(na)*h {
					lr.commands = addFlight(lr.commands, f.seq, tau, u, h)
				}
			}
		}
		lr.samples = compact(lr.samples)
		// The plant's free motion, then the actuator's events in order.
		simstep.Plant(xn, s.phi, x, s.wFac, rng, std)
		simstep.MulVec(xn, s.gam, uHeld, true)
		for _, i := range lr.arrivals(lr.commands, k) {
			f := &lr.commands[i]
			f.valid = false
			if f.seq <= lastApplied {
				continue
			}
			lastApplied = f.seq
			g0, _ := s.gammas(f.off)
			for r := 0; r < n; r++ {
				acc := 0.0
				for c := 0; c < m; c++ {
					acc += g0.At(r, c) * (f.val[c] - uHeld[c])
				}
				xn[r] += acc
			}
			copy(uHeld, f.val)
		}
		lr.commands = compact(lr.commands)
		copy(x, xn)
		if path != nil {
			*path = append(*path, PathPoint{K: k, Error: append([]float64(nil), e...), Mode: -1, Tau: math.NaN(),
				State: isc*len(s.ca) + ica})
		}
		if k >= warmup {
			d := k - lastApplied
			if lastApplied < 0 || d >= na {
				ages[na]++
			} else {
				ages[d]++
			}
		}
		isc = draw(rng, s.rowsSC[isc])
		ica = draw(rng, s.rowsCA[ica])
	}
	return sum / float64(s.nCounted)
}

func addFlight(list []flight, k int, tau float64, val []float64, h float64) []flight {
	at, off := landing(k, tau, h)
	return append(list, flight{seq: k, tau: tau, val: append([]float64(nil), val...), at: at, off: off, valid: true})
}

// arrivals lists the indices of the flights that arrive in period k, in
// order of arrival (ties: the older first, which leaves the newer in
// force, as either order would).
func (lr *longRun) arrivals(list []flight, k int) []int {
	lr.order = lr.order[:0]
	for i := range list {
		if list[i].valid && list[i].at == k {
			lr.order = append(lr.order, i)
		}
	}
	sort.Slice(lr.order, func(a, b int) bool {
		fa, fb := &list[lr.order[a]], &list[lr.order[b]]
		if fa.off != fb.off {
			return fa.off < fb.off
		}
		return fa.seq < fb.seq
	})
	return lr.order
}

func compact(list []flight) []flight {
	out := list[:0]
	for _, f := range list {
		if f.valid {
			out = append(out, f)
		}
	}
	return out
}
