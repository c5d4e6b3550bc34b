package rig

import (
	"bytes"
	"context"
	"log/slog"
	"net"
	"net/netip"
	"strings"
	"sync"
	"testing"

	"rigwire/profiles"
)

type lockedBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (l *lockedBuffer) Write(p []byte) (int, error) {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.Write(p)
}

func (l *lockedBuffer) String() string {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.String()
}

// A node whose samples go to a port nobody listens on (the relay not
// started yet) says so once, instead of running on in silence.
func TestNodeWarnsWhenNothingAnswers(t *testing.T) {
	loop, err := profiles.LoadLoop("../../profiles/examples/demo/diverter.yaml")
	if err != nil {
		t.Fatal(err)
	}
	c, err := net.ListenUDP("udp4", &net.UDPAddr{IP: net.IPv4(127, 0, 0, 1)})
	if err != nil {
		t.Fatal(err)
	}
	closed := c.LocalAddr().(*net.UDPAddr).AddrPort()
	c.Close()
	var logs lockedBuffer
	periods := int((NoCommandWarnAfter.Seconds()+0.3)/loop.Period) + 1
	nd, err := NewNode(NodeConfig{Loop: loop, Relay: netip.AddrPortFrom(closed.Addr(), closed.Port()), Periods: periods,
		Seed: 1, Logger: slog.New(slog.NewTextHandler(&logs, nil))})
	if err != nil {
		t.Fatal(err)
	}
	if err := nd.Run(context.Background()); err != nil {
		t.Fatal(err)
	}
	out := logs.String()
	if n := strings.Count(out, "no command has come back yet"); n != 1 {
		t.Errorf("warned %d times, want once:\n%s", n, out)
	}
	if !strings.Contains(out, "sending_to="+closed.String()) {
		t.Errorf("the warning does not name where the node sends:\n%s", out)
	}
}
