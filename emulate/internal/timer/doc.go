// Package timer puts a goroutine to sleep until a deadline with better
// than the Go scheduler's millisecond: the relay's release goroutines wait
// on it for the next datagram's due time, and the simulated rig's node and
// controller for the next sample time and the end of the compute delay.
//
// A Waiter is armed with a duration and waited on. NewPrecise gives a
// Linux timerfd (CLOCK_MONOTONIC) read with a plain blocking read: on a
// goroutine locked to its OS thread the wake-up comes straight from the
// kernel's high-resolution timer, within some tens of microseconds, where
// a Go timer rounds waits under a millisecond up to about one. Elsewhere,
// and when a test drives the clock (testing/synctest), NewPortable gives a
// Go timer. Slack is how long before a deadline a caller that must be on
// time stops sleeping and spins the rest.
//
// Place in the flow: under the relay (emulate: a delayed datagram waits
// here for its release) and the simulated rig (emulate/rig: the sensor's
// ticker and the controller's compute delay). It knows nothing of
// datagrams or loops; arming and waiting do not allocate.
package timer
