// Package lab builds and removes the lab topology: named network
// namespaces joined by veth pairs, with addresses and routes, so that a dry
// run with the simulated rig crosses real interfaces instead of loopback.
//
// The default topology is a chain of three namespaces, one per role:
//
//	rw-rig  [to-rw-relay 10.213.1.1/30] ── [to-rw-rig 10.213.1.2/30]  rw-relay
//	rw-relay [to-rw-ctl 10.213.2.1/30] ── [to-rw-relay 10.213.2.2/30] rw-ctl
//
// Each namespace has its loopback up; a namespace at the end of the chain
// (one link) gets a route to every other link's subnet through its peer.
// The relay namespace does not forward (a new namespace starts with
// forwarding off), so datagrams between rig and controller pass only
// through a relay process running there. The addresses are private
// (RFC 1918) and exist only inside these namespaces; nothing is routed
// from or to the host's own namespace.
//
// A topology other than the default is read from a YAML file ([Load],
// [Parse]; errors name the file, line and key). [Build] and [Remove] are
// idempotent and print each step; both need root or CAP_NET_ADMIN and
// CAP_SYS_ADMIN (to mount the namespace files under /run/netns, where
// `ip netns` finds them too).
//
// Place in the flow: beneath it. The lab carries no datagram and computes
// nothing; it builds the interfaces the flow crosses in a dry run (rig →
// relay → controller, each in its own namespace), set up by `impair lab
// build` before the relay, the simulated rig and the monitor start.
package lab
