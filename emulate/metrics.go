package emulate

import (
	"sync"
	"time"

	"github.com/prometheus/client_golang/prometheus"
)

// Outcomes of a datagram, as the metrics and the record spell them. Every
// datagram the relay reads ends in exactly one of them.
const (
	OutcomeForwarded = "forwarded" // released to its destination
	OutcomeDropped   = "dropped"   // lost by the profile's loss draw
	OutcomeOverflow  = "overflow"  // the direction's in-flight bound was reached
	OutcomeStranger  = "stranger"  // from a source that is not the rig's
	OutcomeOversized = "oversized" // longer than the largest datagram accepted
	OutcomeSendError = "send_error"
	// OutcomeShutdown: still in the schedule when a forced stop came.
	OutcomeShutdown = "shutdown"
	// OutcomeTripped: a command dropped, on arrival or while held, because
	// the safety trip stopped commands (trip.StopCommands).
	OutcomeTripped = "tripped"
	// OutcomeNoActuator: a command that arrived before the relay knew where
	// the actuator is (no Actuator given and no sensor datagram yet).
	OutcomeNoActuator = "no_actuator"
)

// Metrics are the relay's Prometheus metrics, registered on the registry
// passed to NewMetrics. All names carry the rigwire_relay_ prefix and base
// units.
type Metrics struct {
	Datagrams    *prometheus.CounterVec   // direction, outcome
	Bytes        *prometheus.CounterVec   // direction: payload bytes forwarded
	Delay        *prometheus.HistogramVec // direction: drawn delay
	Lateness     *prometheus.HistogramVec // direction: actual − due release time
	InFlight     *prometheus.GaugeVec     // direction
	ChannelState *prometheus.GaugeVec     // direction, state: 1 for the current state
	Tap          *prometheus.CounterVec   // outcome: sent, send_error
	RecordLost   prometheus.Counter
	Reloads      *prometheus.CounterVec // result: ok, error, ignored (after a trip)
	// LossRuns: lengths of the runs of consecutive datagrams the profile
	// dropped, observed when a datagram the profile kept ends a run.
	LossRuns *prometheus.HistogramVec // direction
	Tripped  prometheus.Gauge         // 1 once the safety trip fired
	// ScenarioPhase: 1 for the phase being played, 0 for those played before.
	ScenarioPhase *prometheus.GaugeVec // index, phase
	ScenarioSteps prometheus.Counter
	// ScenarioElapsed reads the wall-clock time since the scenario started
	// playing, at every scrape; frozen at its length once it has ended.
	ScenarioElapsed prometheus.GaugeFunc
	scenario        scenarioClock
	// SensorSource: 1 for the source the relay takes for the sensor node.
	SensorSource        *prometheus.GaugeVec   // source
	SensorSourceChanges *prometheus.CounterVec // reason: first, quiet
	// Reordered: datagrams released after one of the same direction that
	// arrived later than they did (overtaken on the way).
	Reordered *prometheus.CounterVec // direction
	// Turnaround: for each command paired with its sample (Pairing), the
	// time from the sample's release to the controller to the command's
	// arrival at the relay.
	Turnaround prometheus.Histogram
	// SensorLatency: for each sensor datagram with a sample time on a
	// clock the relay shares (Pairing.Clock), the time from its sample
	// time to its arrival at the relay.
	SensorLatency prometheus.Histogram
	// PairingFailures: datagrams that could not be paired, by reason.
	PairingFailures *prometheus.CounterVec // reason
}

// scenarioClock is what the scenario elapsed-time gauge reads.
type scenarioClock struct {
	mu      sync.Mutex
	start   time.Time // zero: not playing
	stopped float64   // seconds, once it ended
}

func (c *scenarioClock) begin(t time.Time) {
	c.mu.Lock()
	c.start = t
	c.mu.Unlock()
}

func (c *scenarioClock) end(t time.Time) {
	c.mu.Lock()
	if !c.start.IsZero() {
		c.stopped = t.Sub(c.start).Seconds()
	}
	c.start = time.Time{}
	c.mu.Unlock()
}

func (c *scenarioClock) elapsed() float64 {
	c.mu.Lock()
	defer c.mu.Unlock()
	if c.start.IsZero() {
		return c.stopped
	}
	return time.Since(c.start).Seconds()
}

// LossRunBuckets are the upper bounds of the loss-run histogram (counts of
// datagrams).
var LossRunBuckets = []float64{1, 2, 3, 4, 6, 8, 12, 16, 24, 32, 64, 128}

// NewMetrics creates the relay's metrics and registers them on reg.
func NewMetrics(reg prometheus.Registerer) *Metrics {
	m := &Metrics{
		Datagrams: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "rigwire_relay_datagrams_total",
			Help: "Datagrams the relay read, by direction and by what became of them.",
		}, []string{"direction", "outcome"}),
		Bytes: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "rigwire_relay_forwarded_bytes_total",
			Help: "Payload bytes released to their destination, by direction.",
		}, []string{"direction"}),
		Delay: prometheus.NewHistogramVec(prometheus.HistogramOpts{
			Name:    "rigwire_relay_delay_seconds",
			Help:    "Delay drawn from the profile for each datagram not dropped.",
			Buckets: prometheus.ExponentialBucketsRange(50e-6, 2, 24),
		}, []string{"direction"}),
		Lateness: prometheus.NewHistogramVec(prometheus.HistogramOpts{
			Name:    "rigwire_relay_release_lateness_seconds",
			Help:    "Actual release time minus due release time of each forwarded datagram.",
			Buckets: prometheus.ExponentialBucketsRange(1e-6, 0.1, 26),
		}, []string{"direction"}),
		InFlight: prometheus.NewGaugeVec(prometheus.GaugeOpts{
			Name: "rigwire_relay_in_flight",
			Help: "Datagrams held by the relay, waiting for their release time.",
		}, []string{"direction"}),
		ChannelState: prometheus.NewGaugeVec(prometheus.GaugeOpts{
			Name: "rigwire_relay_channel_state",
			Help: "1 for the state each direction's channel is in now, 0 for the others.",
		}, []string{"direction", "state"}),
		Tap: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "rigwire_relay_tap_datagrams_total",
			Help: "Copies of sensor datagrams sent to the tap, by outcome.",
		}, []string{"outcome"}),
		RecordLost: prometheus.NewCounter(prometheus.CounterOpts{
			Name: "rigwire_relay_record_lost_total",
			Help: "Records not written to the record file because its writer fell behind.",
		}),
		Reloads: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "rigwire_relay_profile_reloads_total",
			Help: "Profile reloads, by result.",
		}, []string{"result"}),
		LossRuns: prometheus.NewHistogramVec(prometheus.HistogramOpts{
			Name:    "rigwire_relay_loss_run_length",
			Help:    "Lengths (datagrams) of the runs of consecutive datagrams dropped by the profile, by direction.",
			Buckets: LossRunBuckets,
		}, []string{"direction"}),
		Tripped: prometheus.NewGauge(prometheus.GaugeOpts{
			Name: "rigwire_relay_tripped",
			Help: "1 once the safety trip fired, else 0.",
		}),
		ScenarioPhase: prometheus.NewGaugeVec(prometheus.GaugeOpts{
			Name: "rigwire_relay_scenario_phase",
			Help: "1 for the scenario phase being played, 0 for the phases played before.",
		}, []string{"index", "phase"}),
		ScenarioSteps: prometheus.NewCounter(prometheus.CounterOpts{
			Name: "rigwire_relay_scenario_steps_total",
			Help: "Scenario steps applied.",
		}),
		SensorSource: prometheus.NewGaugeVec(prometheus.GaugeOpts{
			Name: "rigwire_relay_sensor_source_info",
			Help: "1 for the source (address:port) the relay takes for the rig's sensor node; absent until one has sent.",
		}, []string{"source"}),
		SensorSourceChanges: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "rigwire_relay_sensor_source_changes_total",
			Help: "Times the relay took a source for the sensor node, by reason: first (the first to send), quiet (the previous one had been silent for the relock interval).",
		}, []string{"reason"}),
	}
	m.Reordered = prometheus.NewCounterVec(prometheus.CounterOpts{
		Name: "rigwire_relay_reordered_datagrams_total",
		Help: "Datagrams released after a datagram of the same direction that arrived later (overtaken: released out of arrival order), by direction; forwarded datagrams only, so they are also counted as forwarded.",
	}, []string{"direction"})
	m.Turnaround = prometheus.NewHistogram(prometheus.HistogramOpts{
		Name:    "rigwire_relay_controller_turnaround_seconds",
		Help:    "For each command paired with the sample it answers: from the relay's release of that sample to the controller to the command's arrival at the relay (the controller's computing time plus both hops to it). Only with a pairing (impair run --loop).",
		Buckets: prometheus.ExponentialBucketsRange(10e-6, 1, 34),
	})
	m.SensorLatency = prometheus.NewHistogram(prometheus.HistogramOpts{
		Name:    "rigwire_relay_sensor_latency_seconds",
		Help:    "For each sensor datagram that carries its sample time on a clock the relay shares (impair run --loop with decode.sample_time and --sample-clock): from that time to the datagram's arrival at the relay (the node's stack and the hop to the relay).",
		Buckets: prometheus.ExponentialBucketsRange(1e-6, 1, 31),
	})
	m.PairingFailures = prometheus.NewCounterVec(prometheus.CounterOpts{
		Name: "rigwire_relay_pairing_failures_total",
		Help: "Datagrams the relay could not pair, by reason: sample_without_sequence (a sensor datagram whose sequence does not decode), command_without_sequence (likewise a command), sample_not_released (a command for a sample the relay has not sent to the controller, or not recently), sample_without_time (a sensor datagram whose sample time does not decode, with a sample clock), sample_time_ahead (a sample time ahead of the relay's clock: the clocks are not shared).",
	}, []string{"reason"})
	m.ScenarioElapsed = prometheus.NewGaugeFunc(prometheus.GaugeOpts{
		Name: "rigwire_relay_scenario_elapsed_seconds",
		Help: "Wall-clock seconds since the scenario started playing (its phases' times are scaled by the time scale); its length once it has ended; 0 before.",
	}, m.scenario.elapsed)
	reg.MustRegister(m.Datagrams, m.Bytes, m.Delay, m.Lateness, m.InFlight,
		m.ChannelState, m.Tap, m.RecordLost, m.Reloads, m.LossRuns, m.Tripped,
		m.ScenarioPhase, m.ScenarioSteps, m.ScenarioElapsed, m.SensorSource, m.SensorSourceChanges, m.Reordered,
		m.Turnaround, m.SensorLatency, m.PairingFailures)
	m.SensorSourceChanges.WithLabelValues(lockFirst)
	m.SensorSourceChanges.WithLabelValues(lockQuiet)
	for _, o := range []string{"sent", OutcomeSendError} {
		m.Tap.WithLabelValues(o)
	}
	m.Reloads.WithLabelValues("ok")
	m.Reloads.WithLabelValues("error")
	m.Reloads.WithLabelValues("ignored")
	return m
}

// dirMetrics are one direction's metric handles, resolved once so that
// the per-datagram path only does atomic adds.
type dirMetrics struct {
	outcome  [len(outcomeIndex)]prometheus.Counter
	bytes    prometheus.Counter
	delay    prometheus.Observer
	lateness prometheus.Observer
	inFlight prometheus.Gauge
	lossRuns prometheus.Observer
	// reordered counts forwarded datagrams released after a later arrival.
	reordered prometheus.Counter
}

type outcomeID int

const (
	oForwarded outcomeID = iota
	oDropped
	oOverflow
	oStranger
	oOversized
	oSendError
	oShutdown
	oTripped
	oNoActuator
)

var outcomeIndex = [...]string{oForwarded: OutcomeForwarded, oDropped: OutcomeDropped,
	oOverflow: OutcomeOverflow, oStranger: OutcomeStranger, oOversized: OutcomeOversized,
	oSendError: OutcomeSendError, oShutdown: OutcomeShutdown, oTripped: OutcomeTripped,
	oNoActuator: OutcomeNoActuator}

func (m *Metrics) forDirection(dir string) *dirMetrics {
	dm := &dirMetrics{
		bytes:     m.Bytes.WithLabelValues(dir),
		delay:     m.Delay.WithLabelValues(dir),
		lateness:  m.Lateness.WithLabelValues(dir),
		inFlight:  m.InFlight.WithLabelValues(dir),
		lossRuns:  m.LossRuns.WithLabelValues(dir),
		reordered: m.Reordered.WithLabelValues(dir),
	}
	for i, o := range outcomeIndex {
		dm.outcome[i] = m.Datagrams.WithLabelValues(dir, o)
	}
	return dm
}
