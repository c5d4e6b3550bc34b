package emulate

import (
	"errors"
	"fmt"
	"io"
	"log/slog"
	"net/netip"
	"time"

	"rigwire/profiles"

	"github.com/prometheus/client_golang/prometheus"
)

// Config is what a Relay needs. Listen and Controller are required.
type Config struct {
	Profile *profiles.Profile
	// Listen is where the sensor node's datagrams arrive; commands for the
	// actuator leave from the same socket.
	Listen netip.AddrPort
	// Controller is where sensor datagrams go; its replies to the relay's
	// controller-facing socket are the commands.
	Controller netip.AddrPort
	// Actuator receives the commands; zero: the rig's sensor source (see
	// Sensor). Commands that arrive before that source is known are
	// counted as no_actuator and dropped.
	Actuator netip.AddrPort
	// Sensor pins the rig's sensor source. With an address and a port only
	// that source is accepted at Listen; with port 0 only that address, on
	// the first port it sends from. Zero: the relay locks onto the first
	// source that sends to Listen. Every other source is a stranger:
	// counted, never forwarded, never sent commands.
	Sensor netip.AddrPort
	// RelockAfter, when > 0, lets another source (one the pin allows) take
	// the sensor's place once the locked source has been silent this long:
	// the way back in for a rig node that restarted on a new port. Each
	// change is logged and counted. Zero: the lock holds for the run.
	RelockAfter time.Duration
	// ControllerBind is the local address of the socket that talks to the
	// controller; zero: an ephemeral port (on loopback if the controller is
	// on loopback).
	ControllerBind netip.AddrPort
	// Tap, when set, receives a copy of every accepted sensor datagram as
	// it arrived, before any impairment.
	Tap netip.AddrPort
	// TapFunc, when set, is called with every accepted sensor datagram as it
	// arrived (the payload is only valid during the call); for a monitor in
	// the same process.
	TapFunc func(payload []byte, arrival time.Time)
	// Seed of the decisions; used only when SeedSet (else the profile's
	// seed, else a random one, which Seed reports).
	Seed    uint64
	SeedSet bool
	// MaxDatagram is the longest payload accepted (default 4096 bytes);
	// longer ones are counted as oversized and dropped.
	MaxDatagram int
	// MaxInFlight bounds the datagrams each direction holds (default 2048);
	// beyond it they are counted as overflow and dropped.
	MaxInFlight int
	// Spin is how long before a due time the release goroutine stops
	// sleeping and spins (default 50µs; 0 never spins).
	Spin    time.Duration
	SpinSet bool
	// Pairing, when set, pairs each command with the sample it answers and
	// measures the controller's turnaround (pair.go); both layouts need a
	// sequence field.
	Pairing *Pairing
	// Record, when set, receives one line per datagram (RecordHeader).
	Record io.Writer
	// Metrics, when nil, are created on a private registry.
	Metrics *Metrics
	Logger  *slog.Logger
	// portableTimers makes the release goroutines sleep on Go timers (for
	// tests under testing/synctest).
	portableTimers bool
	// conns replaces the sockets (tests).
	conns *testConns
}

type testConns struct{ listen, ctlSide, tap batchConn }

// Defaults of Config.
const (
	DefaultMaxDatagram = 4096
	DefaultMaxInFlight = 2048
	DefaultSpin        = 50 * time.Microsecond
)

// checkAndFill refuses a Config New cannot run (no profile, a missing or
// unusable address, a negative relock interval, addresses of two families
// on one socket) and fills in the defaults of the fields left zero.
func (cfg *Config) checkAndFill() error {
	if cfg.Profile == nil {
		return errors.New("relay: no profile")
	}
	if !cfg.Listen.IsValid() || !cfg.Controller.IsValid() {
		return errors.New("relay: the listen and controller addresses are required")
	}
	if cfg.Sensor.IsValid() && cfg.Sensor.Addr().IsUnspecified() {
		return fmt.Errorf("relay: sensor %s: no datagram comes from an unspecified address; want the sensor node's address", cfg.Sensor)
	}
	if cfg.RelockAfter < 0 {
		return fmt.Errorf("relay: relock interval %s: want ≥ 0", cfg.RelockAfter)
	}
	if err := CheckFamilies(*cfg); err != nil {
		return err
	}
	if cfg.MaxDatagram <= 0 {
		cfg.MaxDatagram = DefaultMaxDatagram
	}
	if cfg.MaxInFlight <= 0 {
		cfg.MaxInFlight = DefaultMaxInFlight
	}
	if !cfg.SpinSet {
		cfg.Spin = DefaultSpin
	}
	if cfg.Logger == nil {
		cfg.Logger = slog.Default()
	}
	if cfg.Metrics == nil {
		cfg.Metrics = NewMetrics(prometheus.NewRegistry())
	}
	return nil
}

// family is 4 or 6: the family of socket that reaches a.
func family(a netip.Addr) int {
	if a.Unmap().Is4() {
		return 4
	}
	return 6
}

// FamilyError is a pair of addresses one socket would have to serve in two
// families. Key and With name the two addresses as Config's fields do
// (listen, actuator, sensor, controller, controller_bind); a command
// respells them as its flags or keys.
type FamilyError struct {
	Key  string
	Addr netip.AddrPort
	With string
	Of   netip.AddrPort
	// Why says which socket serves both.
	Why string
}

func (e *FamilyError) Error() string { return e.Spell(func(k string) string { return k }) }

// Spell is the message with the keys spelled by name.
func (e *FamilyError) Spell(name func(key string) string) string {
	a := e.Addr.Addr().String()
	if e.Addr.Port() != 0 {
		a = e.Addr.String()
	}
	return fmt.Sprintf("%s: %s is IPv%d but %s %s is IPv%d (%s); use addresses of one family",
		name(e.Key), a, family(e.Addr.Addr()), name(e.With), e.Of, family(e.Of.Addr()), e.Why)
}

// CheckFamilies refuses addresses a socket of another family would have to
// reach: the listen socket receives from the sensor and sends to the
// actuator; the controller-facing one sends to the controller. It returns
// a *FamilyError.
func CheckFamilies(c Config) error {
	lf := family(c.Listen.Addr())
	for _, a := range []struct {
		key string
		ap  netip.AddrPort
	}{{"actuator", c.Actuator}, {"sensor", c.Sensor}} {
		if a.ap.IsValid() && family(a.ap.Addr()) != lf {
			return &FamilyError{Key: a.key, Addr: a.ap, With: "listen", Of: c.Listen, Why: "one socket serves both"}
		}
	}
	if c.ControllerBind.IsValid() && family(c.ControllerBind.Addr()) != family(c.Controller.Addr()) {
		return &FamilyError{Key: "controller_bind", Addr: c.ControllerBind, With: "controller", Of: c.Controller,
			Why: "that socket sends to the controller"}
	}
	return nil
}
