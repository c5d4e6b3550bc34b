package links

import (
	"bytes"
	"context"
	"errors"
	"io"
	"log/slog"
	"net"
	"net/netip"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"rigwire/emulate"
)

// udpWait bounds how long a loopback test waits for a datagram; it only
// turns a lost datagram into a failure instead of a hang.
const udpWait = 5 * time.Second

func quietLog() *slog.Logger { return slog.New(slog.NewTextHandler(io.Discard, nil)) }

// cleanProfile writes a profile without loss or delay.
func cleanProfile(t *testing.T, dir string) string {
	t.Helper()
	p := filepath.Join(dir, "clean.yaml")
	if err := os.WriteFile(p, []byte("name: clean\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// TestRunRelaysOneLink: a link opened from a Spec relays a sensor
// datagram to the controller on loopback; its record takes its path's
// place only at Commit, and when ctx ends Relay returns nil with the
// record closed.
func TestRunRelaysOneLink(t *testing.T) {
	dir := t.TempDir()
	ctl, err := net.ListenUDP("udp4", &net.UDPAddr{IP: net.IPv4(127, 0, 0, 1)})
	if err != nil {
		t.Fatal(err)
	}
	defer ctl.Close()
	record := filepath.Join(dir, "link.csv")
	spec := Spec{Listen: netip.MustParseAddrPort("127.0.0.1:0"), Controller: ctl.LocalAddr().(*net.UDPAddr).AddrPort(),
		ProfilePath: cleanProfile(t, dir), RecordPath: record}
	run, err := Open([]Spec{spec}, Options{MaxDatagram: 1500, MaxInFlight: 64, TimeScale: 1}, prometheus.NewRegistry(), quietLog())
	if err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(record); !errors.Is(err, os.ErrNotExist) {
		t.Fatalf("the record is at its path before Commit: %v", err)
	}
	if err := run.Commit(); err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- run.Relay(ctx, cancel, make(chan struct{})) }()

	sensor, err := net.DialUDP("udp4", nil, net.UDPAddrFromAddrPort(run.links[0].relay.ListenAddr()))
	if err != nil {
		t.Fatal(err)
	}
	defer sensor.Close()
	if _, err := sensor.Write([]byte("y=0.5")); err != nil {
		t.Fatal(err)
	}
	buf := make([]byte, 64)
	ctl.SetReadDeadline(time.Now().Add(udpWait))
	n, _, err := ctl.ReadFromUDP(buf)
	if err != nil || string(buf[:n]) != "y=0.5" {
		t.Fatalf("controller got %q, %v; want the sensor datagram", buf[:n], err)
	}
	cancel()
	if err := <-done; err != nil {
		t.Fatalf("Relay: %v, want nil after ctx ended", err)
	}
	data, err := os.ReadFile(record)
	if err != nil || !bytes.HasPrefix(data, []byte(emulate.RecordHeader)) {
		t.Fatalf("record: %v, %q; want it to open with the record header", err, data)
	}
}

// TestOpenInputErrors: a profile that does not load and a record path
// that names an input of the run are errors of the input (InputError),
// named by link when the links are labelled, and by the links file and
// the entry's line when they come from one; nothing is left at the
// record's path.
func TestOpenInputErrors(t *testing.T) {
	dir := t.TempDir()
	prof := cleanProfile(t, dir)
	base := Spec{Name: "pump", Listen: netip.MustParseAddrPort("127.0.0.1:0"), Controller: netip.MustParseAddrPort("127.0.0.1:9")}
	cases := []struct {
		name     string
		spec     func(Spec) Spec
		labelled bool
		want     string
	}{
		{"missing profile", func(s Spec) Spec { s.ProfilePath = filepath.Join(dir, "none.yaml"); return s }, false, "none.yaml"},
		{"missing profile, labelled", func(s Spec) Spec { s.ProfilePath = filepath.Join(dir, "none.yaml"); return s }, true, `link "pump": `},
		{"record over the profile, from a links file", func(s Spec) Spec {
			s.File, s.Line, s.ProfilePath, s.RecordPath = "rigs.yaml", 4, prof, prof
			return s
		}, true, `rigs.yaml:4: link "pump": record ` + prof + `: that is an input of the run`},
		{"record over the profile", func(s Spec) Spec { s.ProfilePath, s.RecordPath = prof, prof; return s }, false, "that is an input of the run"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := Open([]Spec{c.spec(base)}, Options{MaxDatagram: 1500, MaxInFlight: 64, TimeScale: 1, Labelled: c.labelled}, prometheus.NewRegistry(), quietLog())
			var ie *InputError
			if !errors.As(err, &ie) || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("error %v; want an InputError with %q", err, c.want)
			}
		})
	}
	if data, err := os.ReadFile(prof); err != nil || string(data) != "name: clean\n" {
		t.Errorf("the profile changed: %q, %v", data, err)
	}
}
