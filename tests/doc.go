// Package tests holds rigwire's end-to-end checks: the built commands run
// as separate processes and talk over real UDP sockets on loopback (and,
// as root, across the lab's namespaces), and their results are compared
// with the laws the profiles state (a relay's delays and losses against
// their distributions), with the prediction (a monitored run's E[eᵀe]),
// with the documents (the file-format reference, the model's section
// numbers), with outside tools (promtool, a Prometheus server), and the
// tree with its floor plan. The reference values of the prediction's own checks
// live beside them, in estimate/testdata/reference; the load bars are in
// tests/load.
//
// Place in the flow: all of it, from outside. A test starts at a file in
// profiles/examples, sends datagrams through `impair run`, lets `monitor`
// read the tap, and checks what comes out at the end: metrics, summaries,
// reports and exit statuses.
package tests
