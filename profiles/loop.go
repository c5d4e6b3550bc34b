package profiles

import (
	"rigwire/emulate/trip"
	"rigwire/profiles/datagram"
	"rigwire/profiles/laws"

	"gonum.org/v1/gonum/mat"
)

// Loop is a validated loop description (the loop file of the monitor): a
// continuous-time plant, a discrete-time controller, the sampling period,
// the network profile the loop runs over and where the plant's outputs sit
// in the sensor datagrams. LoadLoop and ParseLoop build it; every matrix
// shape has been checked against the others, so its users may rely on
//
//	Plant.A n×n, Plant.B n×m, Plant.C p×n, Plant.W n×n, Plant.V p×p,
//	Controller.A nc×nc, Controller.B nc×p, Controller.C m×nc, Controller.D m×p,
//	len(Setpoint) = p, Compute non-nil with its lowest value in [0, Period).
//
// A static controller (u = D e) has nc = 0 and nil A, B, C.
type Loop struct {
	// File is the path the loop was read from ("" when parsed from memory).
	File string
	// Period is the sampling period h in seconds, > 0.
	Period     float64
	Plant      Plant
	Controller Controller
	// Setpoint is the constant reference r (p entries; zeros by default),
	// the offset of a sinusoidal Reference.
	Setpoint []float64
	// Reference is how r moves about Setpoint (key reference): constant
	// (the zero value), a sine or a sweep of sines. ReferenceAt gives
	// r(t_k) for sample k.
	Reference Reference
	// Compute is the law of c, the controller's computing time and any
	// stack latency the rig adds, drawn afresh for every command and added
	// to its delay (key compute_delay: a duration for a constant, or any
	// delay law of the profile format). Never nil; a constant 0 by
	// default. ComputeFloor and ComputeConstant read it.
	Compute laws.Delay
	// Profile is the network the loop runs over; never nil.
	Profile *Profile
	// ProfileFile is the resolved path of the profile file, "" when the
	// profile is inline.
	ProfileFile string
	// Actuator says what the actuator does between commands.
	Actuator Actuator
	// Timing is the loop's timing policy (key timing): how old a sample
	// the controller still uses and how old a command the actuator still
	// applies. The zero value is today's one-period rule; use Horizons.
	Timing Timing
	// Decode says where the outputs sit in each sensor datagram. Its
	// Format is "" when the loop file has no decode section (enough for
	// predict, not for monitor run).
	Decode datagram.Layout
	// CommandDecode says where a command datagram carries the sequence
	// number of the sample it answers (key command_decode; Format "" when
	// absent): with Decode's sequence, what lets the relay pair each
	// command with its sample and measure the controller's turnaround.
	CommandDecode datagram.Layout
	// Trip is the safety trip the monitor judges on every sample (key
	// trip); Trip.Enabled is false when the loop file has none.
	Trip trip.Rule
}

// Plant is the continuous-time plant dx = (A x + B u) dt + dw with
// E[dw dwᵀ] = W dt, y = C x + v with v ~ N(0, V) at each sample.
type Plant struct {
	A, B, C *mat.Dense
	// W is the process noise intensity (n×n, symmetric positive
	// semidefinite); V the sensor noise covariance (p×p, likewise).
	W, V *mat.Dense
}

// Controller is the discrete-time controller run on each sample used:
// u = C xc + D e, xc' = A xc + B e, with e = setpoint − y.
type Controller struct {
	A, B, C *mat.Dense // nil for a static controller
	D       *mat.Dense
	// PID is the controller's gains when the loop file gave it as PID
	// gains (key controller.pid), nil otherwise; A, B, C, D are then its
	// discretisation (PID.Discrete at the loop's period).
	PID *PID
}

// ActuatorPolicy is what the actuator applies when no fresh command is in
// force.
type ActuatorPolicy int

const (
	// HoldLast keeps the last command applied until the next one arrives
	// (zero-order hold; the default, and the model of estimate/model.md §1).
	HoldLast ActuatorPolicy = iota
	// ZeroUnlessFresh applies each command from its arrival to the end of
	// its own period only; before a period's command arrives, and through a
	// period whose command is lost or late, the input is zero (an actuator
	// that fails safe to zero). With no delay this is the lossy-input
	// model of Schenato et al. (Proc. IEEE 95(1), 2007).
	ZeroUnlessFresh
)

// String is the loop file's spelling of the policy.
func (p ActuatorPolicy) String() string {
	if p == ZeroUnlessFresh {
		return "zero"
	}
	return "hold"
}

// Actuator is the actuator's behaviour (loop file key actuator).
type Actuator struct {
	// OnLoss is the policy (key on_loss: hold | zero).
	OnLoss ActuatorPolicy
}

// Timing is the timing policy of estimate/model.md §13. Ages are counted
// from the sample's time t_k, in whole periods h:
//
//   - the controller uses a sample whose age on arrival is below
//     SampleHorizon·h and whose sequence number is above the last sample
//     it used (older and duplicate samples are dropped);
//   - the actuator applies a command whose age on arrival (since the
//     time of the sample it answers, whose sequence number it carries) is
//     below CommandHorizon·h and whose sequence number is above the last
//     command it applied (older and duplicate commands are dropped).
//
// Horizons of 1 are the default and the rule of estimate/model.md §1: a
// sample or a command a period old or more is stale or late.
type Timing struct {
	// SampleHorizon is the controller's horizon in periods; 0 means 1.
	SampleHorizon int
	// CommandHorizon is the actuator's horizon in periods; 0 means 1.
	// Never below SampleHorizon in a loaded loop.
	CommandHorizon int
}

// MaxHorizon is the largest horizon, in periods, a loop file may give.
const MaxHorizon = 16

// Horizons returns the controller's and the actuator's horizons in
// periods, 1 for a horizon the loop file leaves out.
func (l *Loop) Horizons() (sample, command int) {
	sample, command = l.Timing.SampleHorizon, l.Timing.CommandHorizon
	if sample < 1 {
		sample = 1
	}
	if command < 1 {
		command = 1
	}
	return sample, command
}

// Dims returns the loop's dimensions: plant states n, inputs m, outputs
// p, controller states nc.
func (l *Loop) Dims() (n, m, p, nc int) {
	n, m = l.Plant.B.Dims()
	p, _ = l.Plant.C.Dims()
	if l.Controller.A != nil {
		nc, _ = l.Controller.A.Dims()
	}
	return n, m, p, nc
}

// ComputeFloor is the lowest value of the compute law: its constant part,
// the whole of it when it is a constant.
func (l *Loop) ComputeFloor() float64 {
	if l.Compute == nil {
		return 0
	}
	lo, _ := l.Compute.Support()
	return lo
}

// ComputeConstant says whether the compute law is one value (c =
// ComputeFloor for every command).
func (l *Loop) ComputeConstant() bool {
	if l.Compute == nil {
		return true
	}
	lo, hi := l.Compute.Support()
	return lo == hi
}

// ComputeMean is the compute law's mean, E[c].
func (l *Loop) ComputeMean() float64 {
	if l.Compute == nil {
		return 0
	}
	return l.Compute.Mean()
}

// ComputeText describes the compute delay for people: a duration when it
// is a constant ("1ms"), else its law and mean.
func (l *Loop) ComputeText() string {
	if l.ComputeConstant() {
		return laws.Terse.Format(l.ComputeFloor())
	}
	return laws.Describe(l.Compute) + " (mean " + laws.Terse.Format(l.ComputeMean()) + ")"
}
