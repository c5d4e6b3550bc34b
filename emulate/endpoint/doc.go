// Package endpoint reads the network addresses a run is given, the same
// way wherever they are written — a flag of impair or monitor, or a key
// of a links file: HOST:PORT of a socket to bind or send to ([Resolve]),
// HOST or HOST:PORT of the one sender a socket believes ([ParseSender],
// spelled back for the log by [SenderText]),
// a host alone ([ResolveHost]) and the metrics endpoint's address
// ([CheckMetrics]). Host names are looked up unless [LookupNames] is off;
// IPv4-mapped addresses are unmapped, as sockets report sources.
//
// Place in the flow: at the start, beside the files. Flags
// (cmd/internal/cli) and the links file (emulate/links) → endpoint (here)
// → resolved netip addresses for the relay (emulate), its trip socket
// (emulate/trip), the monitor's source pin (estimate/engine) and the
// metrics endpoints.
package endpoint
