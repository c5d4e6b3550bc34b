package tests

import (
	"bytes"
	"fmt"
	"net"
	"net/netip"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/vishvananda/netns"

	"rigwire/deploy/lab"
)

// needRoot skips a test that changes the host's network namespaces unless
// it runs as root; under CI (RIGWIRE_REQUIRE=1, root) it fails instead.
func needRoot(t *testing.T) {
	t.Helper()
	if os.Geteuid() == 0 {
		return
	}
	msg := "needs root (CAP_NET_ADMIN and CAP_SYS_ADMIN) to create network namespaces: run as root, as .ci/run does"
	if os.Getenv("RIGWIRE_REQUIRE") == "1" {
		t.Fatal(msg)
	}
	t.Skip(msg)
}

// testTopology is a three-namespace chain with names of this test run's
// own (the process id), so that it never touches a lab someone built with
// the defaults; its subnets are private and exist only inside the
// namespaces.
func testTopology(t *testing.T) (file string, cfg lab.Config) {
	t.Helper()
	id := os.Getpid() % 10000
	rig, relay, ctl := fmt.Sprintf("rw%d-rig", id), fmt.Sprintf("rw%d-rly", id), fmt.Sprintf("rw%d-ctl", id)
	text := fmt.Sprintf("namespaces: [%s, %s, %s]\nlinks:\n"+
		"  - {a: %s, b: %s, subnet: 10.213.201.0/30}\n"+
		"  - {a: %s, b: %s, subnet: 10.213.202.0/30}\n", rig, relay, ctl, rig, relay, relay, ctl)
	file = filepath.Join(t.TempDir(), "lab.yaml")
	if err := os.WriteFile(file, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	cfg, err := lab.Parse(file, []byte(text))
	if err != nil {
		t.Fatal(err)
	}
	// Whatever happens, nothing is left behind.
	t.Cleanup(func() {
		var out bytes.Buffer
		if err := lab.Remove(cfg, &out); err != nil {
			t.Errorf("cleanup: %v", err)
		}
		for name, ok := range lab.Exists(cfg) {
			if ok {
				t.Errorf("cleanup: namespace %s still exists", name)
			}
		}
	})
	return file, cfg
}

// inNS runs f on a goroutine locked to an OS thread that has entered the
// named namespace; sockets f opens belong to that namespace for good and
// may be used from any goroutine afterwards. If the thread cannot return
// to its first namespace it is left locked, and Go ends it with the
// goroutine.
func inNS(t *testing.T, name string, f func() error) {
	t.Helper()
	errc := make(chan error, 1)
	go func() {
		runtime.LockOSThread()
		origin, err := netns.Get()
		if err != nil {
			errc <- err
			return
		}
		defer origin.Close()
		ns, err := netns.GetFromName(name)
		if err != nil {
			errc <- fmt.Errorf("namespace %s: %w", name, err)
			return
		}
		defer ns.Close()
		if err := netns.Set(ns); err != nil {
			errc <- fmt.Errorf("entering %s: %w", name, err)
			return
		}
		ferr := f()
		if err := netns.Set(origin); err != nil {
			errc <- fmt.Errorf("leaving %s: %w", name, err)
			return // the thread stays locked and dies with the goroutine
		}
		runtime.UnlockOSThread()
		errc <- ferr
	}()
	if err := <-errc; err != nil {
		t.Fatal(err)
	}
}

func listenIn(t *testing.T, ns string, addr netip.AddrPort) *net.UDPConn {
	t.Helper()
	var c *net.UDPConn
	inNS(t, ns, func() (err error) {
		c, err = net.ListenUDP("udp4", net.UDPAddrFromAddrPort(addr))
		return err
	})
	t.Cleanup(func() { c.Close() })
	return c
}

// impair lab build builds the namespaces, veth pairs, addresses and routes
// (twice: the second time finds everything there); a datagram sent from
// the rig's namespace to the relay's address crosses the veth; lab remove
// removes it all (twice: the second time finds nothing).
func TestLabBuildRemove(t *testing.T) {
	needRoot(t)
	impair := buildCmd(t, "impair")
	file, cfg := testTopology(t)
	rig, relay := cfg.Namespaces[0], cfg.Namespaces[1]

	runLab(t, impair, []string{"build", "--config", file}, []string{
		"namespace " + rig + ": created",
		"link " + rig + "/to-" + relay + " – " + relay + "/to-" + rig + ": created",
		"address 10.213.201.1/30 on " + rig + "/to-" + relay + ", up",
		"route 10.213.202.0/30 via 10.213.201.2 dev to-" + relay + " in " + rig,
	})
	runLab(t, impair, []string{"build", "--config", file}, []string{
		"namespace " + rig + ": exists",
		"link " + rig + "/to-" + relay + " – " + relay + "/to-" + rig + ": exists",
	})
	for name, ok := range lab.Exists(cfg) {
		if !ok {
			t.Fatalf("namespace %s missing after lab build", name)
		}
	}

	// A UDP datagram from the rig's namespace reaches the relay's address
	// across the veth, from the rig's own address on it.
	dst := netip.MustParseAddrPort("10.213.201.2:9470")
	rx := listenIn(t, relay, dst)
	var tx *net.UDPConn
	inNS(t, rig, func() (err error) {
		tx, err = net.DialUDP("udp4", nil, net.UDPAddrFromAddrPort(dst))
		return err
	})
	defer tx.Close()
	want := []byte("conveyor belt sample 1")
	if _, err := tx.Write(want); err != nil {
		t.Fatal(err)
	}
	rx.SetReadDeadline(time.Now().Add(5 * time.Second))
	buf := make([]byte, 1500)
	n, from, err := rx.ReadFromUDPAddrPort(buf)
	if err != nil {
		t.Fatalf("no datagram across the veth: %v", err)
	}
	if !bytes.Equal(buf[:n], want) || from.Addr() != netip.MustParseAddr("10.213.201.1") {
		t.Errorf("got %q from %v, want %q from 10.213.201.1", buf[:n], from, want)
	}

	runLab(t, impair, []string{"remove", "--config", file}, []string{"namespace " + rig + ": removed"})
	runLab(t, impair, []string{"remove", "--config", file}, []string{"namespace " + rig + ": absent"})
	for name, ok := range lab.Exists(cfg) {
		if ok {
			t.Errorf("namespace %s still there after lab remove", name)
		}
	}
}

// The relay runs inside the relay's namespace (ip netns exec) between a
// sensor in the rig's namespace and a controller in the controller's: a
// sensor datagram crosses two veths to the controller, and the
// controller's reply crosses them back to the sensor's address.
func TestLabRelayAcrossNamespaces(t *testing.T) {
	needRoot(t)
	ip := needTool(t, "ip", "iproute2")
	impair := buildCmd(t, "impair")
	_, cfg := testTopology(t)
	rig, relay, ctl := cfg.Namespaces[0], cfg.Namespaces[1], cfg.Namespaces[2]
	var out bytes.Buffer
	if err := lab.Build(cfg, &out); err != nil {
		t.Fatalf("%v\n%s", err, out.String())
	}

	profile := filepath.Join(t.TempDir(), "clean.yaml")
	os.WriteFile(profile, []byte("name: lab-clean\nsensor_to_controller: {delay: {kind: constant, value: 1ms}}\n"), 0o644)
	sensorAddr := netip.MustParseAddrPort("10.213.201.1:9469")
	listen := netip.MustParseAddrPort("10.213.201.2:9470")
	ctlAddr := netip.MustParseAddrPort("10.213.202.2:9470")
	sensor := listenIn(t, rig, sensorAddr)
	controller := listenIn(t, ctl, ctlAddr)
	p := start(t, ip, "netns", "exec", relay, impair, "run", "--profile", profile,
		"--listen", listen.String(), "--controller", ctlAddr.String(), "--metrics", "off")

	// The relay may not be reading yet: send until the controller hears.
	buf := make([]byte, 1500)
	var from netip.AddrPort
	got := false
	for i := 0; i < 100 && !got; i++ {
		if _, err := sensor.WriteToUDPAddrPort([]byte(fmt.Sprintf("s,%d,0.5", i)), listen); err != nil {
			t.Fatal(err)
		}
		controller.SetReadDeadline(time.Now().Add(100 * time.Millisecond))
		n, src, err := controller.ReadFromUDPAddrPort(buf)
		if err == nil && strings.HasPrefix(string(buf[:n]), "s,") {
			got, from = true, src
		}
	}
	if !got {
		t.Fatalf("no sensor datagram reached the controller's namespace through the relay\n%s", p.out.String())
	}
	if from.Addr() != netip.MustParseAddr("10.213.202.1") {
		t.Errorf("controller heard the relay from %v, want 10.213.202.1 (the relay's side of the second veth)", from)
	}
	if _, err := controller.WriteToUDPAddrPort([]byte("u,1.25"), from); err != nil {
		t.Fatal(err)
	}
	sensor.SetReadDeadline(time.Now().Add(5 * time.Second))
	for {
		n, src, err := sensor.ReadFromUDPAddrPort(buf)
		if err != nil {
			t.Fatalf("no command came back to the rig's namespace: %v\n%s", err, p.out.String())
		}
		if string(buf[:n]) == "u,1.25" {
			if src != listen {
				t.Errorf("command came from %v, want the relay's listen address %v", src, listen)
			}
			break
		}
	}
	p.signal(t, syscall.SIGTERM)
	if code := p.wait(t, 10*time.Second); code != 0 {
		t.Errorf("relay exited %d, want 0\n%s", code, p.out.String())
	}
	if !strings.Contains(p.out.String(), "emergency stop") {
		t.Errorf("relay printed no safety caution:\n%s", p.out.String())
	}
}

// runLab runs impair lab ARGS and checks that it exits 0 and prints each
// of the wanted lines.
func runLab(t *testing.T, impair string, args []string, want []string) {
	t.Helper()
	p := start(t, impair, append([]string{"lab"}, args...)...)
	if code := p.wait(t, 30*time.Second); code != 0 {
		t.Fatalf("impair lab %v exited %d:\n%s", args, code, p.out.String())
	}
	for _, w := range want {
		if !strings.Contains(p.out.String(), w+"\n") {
			t.Errorf("impair lab %v did not print %q:\n%s", args, w, p.out.String())
		}
	}
}
