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

	"golang.org/x/net/ipv4"

	"rigwire/tests/load/loadkit"
)

type counters struct {
	Received  uint64 `json:"received"`
	Forwarded uint64 `json:"forwarded"`
	Errors    uint64 `json:"send_errors"`
	Reads     uint64 `json:"read_calls"`
}

func main() {
	listen := flag.String("listen", "", "loopback HOST:PORT to receive on (required)")
	to := flag.String("to", "", "loopback HOST:PORT to forward to (required)")
	batch := flag.Int("batch", 64, "most datagrams per recvmmsg/sendmmsg call")
	rcvbuf := flag.Int("rcvbuf", 4<<20, "receive buffer to ask for, bytes (0: the system default)")
	flag.Parse()
	if err := run(*listen, *to, *batch, *rcvbuf); err != nil {
		slog.Error("batchfwd", "err", err)
		os.Exit(1)
	}
}

func run(listen, to string, batch, rcvbuf int) error {
	if batch < 1 || batch > 1024 {
		return fmt.Errorf("-batch: want 1 to 1024, got %d", batch)
	}
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
	tx, err := net.DialUDP("udp", nil, net.UDPAddrFromAddrPort(dst))
	if err != nil {
		rx.Close()
		return fmt.Errorf("opening the sending socket to %v: %w", dst, err)
	}

	// Shutdown order: a signal closes rx, which ends forward; then tx.
	sigs := make(chan os.Signal, 1)
	signal.Notify(sigs, syscall.SIGTERM, syscall.SIGINT)
	go func() { <-sigs; rx.Close() }()

	var c counters
	err = forward(ipv4.NewPacketConn(rx), ipv4.NewPacketConn(tx), batch, &c)
	tx.Close()
	json.NewEncoder(os.Stderr).Encode(c)
	return err
}

// forward copies batches until rx is closed. The same buffers serve the
// read and the write: nothing is allocated per datagram.
func forward(rx, tx *ipv4.PacketConn, batch int, c *counters) error {
	in := make([]ipv4.Message, batch)
	out := make([]ipv4.Message, batch)
	bufs := make([][]byte, batch)
	for i := range in {
		bufs[i] = make([]byte, 65536)
		in[i].Buffers = [][]byte{bufs[i]}
		out[i].Buffers = make([][]byte, 1)
	}
	for {
		n, err := rx.ReadBatch(in, 0)
		if errors.Is(err, net.ErrClosed) {
			return nil
		}
		if err != nil {
			return fmt.Errorf("reading: %w", err)
		}
		c.Reads++
		c.Received += uint64(n)
		for i := range n {
			out[i].Buffers[0] = bufs[i][:in[i].N]
		}
		for done := 0; done < n; {
			k, err := tx.WriteBatch(out[done:n], 0)
			if k > 0 {
				done += k
				c.Forwarded += uint64(k)
			}
			if err != nil {
				c.Errors++
				done++ // skip the datagram that failed
			}
		}
	}
}
