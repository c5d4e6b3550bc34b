package emulate_test

import (
	"context"
	"fmt"
	"log"
	"log/slog"
	"net"
	"net/netip"
	"time"

	"rigwire/emulate"
	"rigwire/profiles"
)

// A relay on loopback: one sensor datagram goes in at the relay's listen
// socket and comes out at the controller 2 ms later, as the profile says.
// Both ports are ephemeral, so the example runs beside anything else.
// Nothing here drives a machine; in front of a real rig the relay is
// started by `impair run`, which shows the safety cautions first (an
// emergency stop independent of the emulated link, the first runs with
// the actuator off or at low gains).
func ExampleRelay_Run() {
	prof, err := profiles.Parse([]byte(`
name: conveyor-cable
seed: 7
sensor_to_controller:
  delay: {kind: constant, value: 2ms}
`), "conveyor-cable.yaml", ".")
	if err != nil {
		log.Fatal(err)
	}

	// The controller: a UDP socket on an ephemeral loopback port.
	ctl, err := net.ListenUDP("udp", net.UDPAddrFromAddrPort(netip.MustParseAddrPort("127.0.0.1:0")))
	if err != nil {
		log.Fatal(err)
	}
	defer ctl.Close()

	relay, err := emulate.New(emulate.Config{
		Profile:    prof,
		Listen:     netip.MustParseAddrPort("127.0.0.1:0"),
		Controller: ctl.LocalAddr().(*net.UDPAddr).AddrPort(),
		Logger:     slog.New(slog.DiscardHandler), // quiet for the example; a run logs its start and stop
	})
	if err != nil {
		log.Fatal(err)
	}
	ctx, stop := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- relay.Run(ctx, nil) }()

	// The sensor node: it sends one sample ("seq,t_k,y") to the relay.
	sensor, err := net.DialUDP("udp", nil, net.UDPAddrFromAddrPort(relay.ListenAddr()))
	if err != nil {
		log.Fatal(err)
	}
	defer sensor.Close()
	sent := time.Now()
	if _, err := sensor.Write([]byte("0,0.000,1.19")); err != nil {
		log.Fatal(err)
	}

	buf := make([]byte, 1500)
	ctl.SetReadDeadline(time.Now().Add(10 * time.Second))
	n, _, err := ctl.ReadFromUDPAddrPort(buf)
	if err != nil {
		log.Fatal(err)
	}
	held := time.Since(sent)
	fmt.Printf("the controller got %q\n", buf[:n])
	fmt.Println("held at least 2ms:", held >= 2*time.Millisecond)

	stop()
	if err := <-done; err != nil {
		log.Fatal(err)
	}
	// After Run has returned, the relay's counters are final.
	s := relay.Stats().SensorToController
	fmt.Printf("%s: forwarded %d, dropped %d, delays drawn %d summing to %.3fs\n",
		s.Direction, s.Forwarded, s.Dropped, s.Delay.Count, s.Delay.Sum)
	// Output:
	// the controller got "0,0.000,1.19"
	// held at least 2ms: true
	// sensor_to_controller: forwarded 1, dropped 0, delays drawn 1 summing to 0.002s
}
