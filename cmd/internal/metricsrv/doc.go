// Package metricsrv serves a Prometheus registry at /metrics for rigwire's
// commands: bound before the command starts its work, so that a busy or bad
// address is reported at once, and shut down when the command ends. It adds
// rigwire_build_info (the build: version, revision and Go version, as
// labels).
//
// Place in the flow: the metrics stage. The relay's counters (emulate) and
// the monitor's estimates and verdicts (estimate/engine) are registered on
// a registry; this package exposes it to the scraper.
package metricsrv
