package emulate

import (
	"net/netip"
	"time"

	"rigwire/emulate/endpoint"
)

// sourceLock decides which source at the listen socket is the rig's sensor
// node. The pin (Config.Sensor) narrows the candidates to one address, or
// one address and port; among the candidates the first to send is locked
// onto, and every other source is a stranger. With relockAfter > 0 a
// candidate may take the place of a locked source that has been silent
// that long.
//
// It is used only by the sensor side's receive goroutine; the locked
// source is published to the relay (srcMu) for the command side.
type sourceLock struct {
	pin         netip.AddrPort // zero: any source; port 0: any port of its address
	relockAfter int64          // ns; 0: never
	locked      netip.AddrPort // zero until the first candidate sends
	lastHeard   int64          // ns since the epoch: the locked source's latest datagram
	warned      bool           // a stranger was logged since the last lock change
}

// candidate reports whether src may be the sensor at all (the pin).
func (l *sourceLock) candidate(src netip.AddrPort) bool {
	switch {
	case !l.pin.IsValid():
		return true
	case l.pin.Port() == 0:
		return src.Addr() == l.pin.Addr()
	default:
		return src == l.pin
	}
}

// Why the sensor source changed (the reason label of
// rigwire_relay_sensor_source_changes_total).
const (
	lockFirst = "first" // the first candidate to send
	lockQuiet = "quiet" // the locked source had been silent RelockAfter
)

// lockChange is what admit did when it made a new source the sensor's.
type lockChange struct {
	why    string         // lockFirst or lockQuiet; "" when nothing changed
	prev   netip.AddrPort // the source before
	silent time.Duration  // how long prev had been silent (lockQuiet)
}

// admit reports whether a datagram from src read at now (ns since the
// epoch) is the rig's, and whether it made src the sensor source.
func (l *sourceLock) admit(src netip.AddrPort, now int64) (bool, lockChange) {
	if src == l.locked {
		l.lastHeard = now
		return true, lockChange{}
	}
	if !l.candidate(src) {
		return false, lockChange{}
	}
	var c lockChange
	switch {
	case !l.locked.IsValid():
		c.why = lockFirst
	case l.relockAfter > 0 && now-l.lastHeard >= l.relockAfter:
		c.why, c.silent = lockQuiet, time.Duration(now-l.lastHeard)
	default:
		return false, lockChange{}
	}
	c.prev = l.locked
	l.locked, l.lastHeard, l.warned = src, now, false
	return true, c
}

// lockChanged publishes a new sensor source: to the command side, the
// metrics and the log.
func (r *Relay) lockChanged(src netip.AddrPort, c lockChange) {
	prev, why := c.prev, c.why
	r.srcMu.Lock()
	r.sensorSrc = src
	r.srcMu.Unlock()
	if prev.IsValid() {
		r.m.SensorSource.DeleteLabelValues(prev.String())
	}
	r.m.SensorSource.WithLabelValues(src.String()).Set(1)
	r.m.SensorSourceChanges.WithLabelValues(why).Inc()
	switch why {
	case lockFirst:
		r.log.Info("sensor source locked: other sources at the listen socket are strangers",
			"sensor", src.String(), "pin", endpoint.SenderText(r.cfg.Sensor, "none (the first source to send)"))
	default:
		r.log.Warn("sensor source changed: the previous one was silent for the relock interval",
			"sensor", src.String(), "previous", prev.String(), "silent", c.silent.Round(time.Millisecond).String())
	}
}

// strangerSeen logs the first stranger after each lock change (the others
// are only counted).
func (r *Relay) strangerSeen(src netip.AddrPort, now int64) {
	l := &r.lock
	if l.warned {
		return
	}
	l.warned = true
	attrs := []any{"stranger", src.String(), "sensor", addrText(l.locked), "pin", endpoint.SenderText(r.cfg.Sensor, "none (the first source to send)")}
	if l.locked.IsValid() && l.candidate(src) {
		silent := time.Duration(now - l.lastHeard)
		attrs = append(attrs, "sensor_silent", silent.Round(time.Millisecond).String())
		if l.relockAfter == 0 {
			attrs = append(attrs, "hint", "if the rig's sensor node restarted on a new port, restart the relay, pin it with --sensor, or allow a relock interval")
		}
	}
	r.log.Warn("datagrams from a stranger at the listen socket: counted, not forwarded (further strangers only counted)", attrs...)
}

func addrText(a netip.AddrPort) string {
	if a.IsValid() {
		return a.String()
	}
	return "none yet"
}
