package main

import (
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"log/slog"
	"net"
	"os"
	"os/signal"
	"syscall"

	"rigwire/tests/load/loadkit"
)

type counters struct {
	Received  uint64 `json:"received"`
	Forwarded uint64 `json:"forwarded"`
	Errors    uint64 `json:"send_errors"`
}

func main() {
	listen := flag.String("listen", "", "loopback HOST:PORT to receive on (required)")
	to := flag.String("to", "", "loopback HOST:PORT to forward to (required)")
	rcvbuf := flag.Int("rcvbuf", 4<<20, "receive buffer to ask for, bytes (0: the system default)")
	flag.Parse()
	if err := run(*listen, *to, *rcvbuf); err != nil {
		slog.Error("naivefwd", "err", err)
		os.Exit(1)
	}
}

func run(listen, to string, rcvbuf int) error {
	if rcvbuf < 0 || rcvbuf > 1<<30 {
		return fmt.Errorf("-rcvbuf: want 0 to 1 GiB, got %d", rcvbuf)
	}
	in, err := loadkit.ParseLoopback(listen)
	if err != nil {
		return fmt.Errorf("-listen: %w", err)
	}
	dst, err := loadkit.ParseLoopback(to)
	if err != nil {
		return fmt.Errorf("-to: %w", err)
	}
	rx, err := net.ListenUDP("udp", net.UDPAddrFromAddrPort(in))
	if err != nil {
		return fmt.Errorf("listening on %v: %w", in, err)
	}
	if rcvbuf > 0 {
		// As much as the relay asks for on its own sockets, so that the
		// comparison is of forwarding loops, not of buffer sizes.
		if err := rx.SetReadBuffer(rcvbuf); err != nil {
			rx.Close()
			return fmt.Errorf("setting the receive buffer to %d bytes: %w", rcvbuf, err)
		}
	}
	tx, err := net.ListenUDP("udp", &net.UDPAddr{IP: net.IP(dst.Addr().AsSlice())})
	if err != nil {
		rx.Close()
		return fmt.Errorf("opening the sending socket: %w", err)
	}

	// Shutdown order: a signal closes rx, which ends forward; then tx.
	sigs := make(chan os.Signal, 1)
	signal.Notify(sigs, syscall.SIGTERM, syscall.SIGINT)
	go func() { <-sigs; rx.Close() }()

	var c counters
	err = forward(rx, tx, net.UDPAddrFromAddrPort(dst), &c)
	tx.Close()
	json.NewEncoder(os.Stderr).Encode(c)
	return err
}

// forward copies datagrams until rx is closed.
func forward(rx, tx *net.UDPConn, dst *net.UDPAddr, c *counters) error {
	buf := make([]byte, 65536)
	for {
		n, _, err := rx.ReadFrom(buf)
		if errors.Is(err, net.ErrClosed) {
			return nil
		}
		if err != nil {
			return fmt.Errorf("reading: %w", err)
		}
		c.Received++
		if _, err := tx.WriteTo(buf[:n], dst); err != nil {
			c.Errors++
			continue
		}
		c.Forwarded++
	}
}
