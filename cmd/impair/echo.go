package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"log/slog"
	"net"
	"os/signal"
	"syscall"
	"time"
)

const echoUsage = `usage: impair echo --listen HOST:PORT

Answers probes from impair probe: each probe datagram is sent back to its
source at once, stamped with the times (wall clock) it was received and
sent back, so that a prober whose clock is synchronised with this one can
split the round trip into its two one-way delays. Datagrams that are not
probes are counted and ignored. Runs until SIGINT or SIGTERM, then exits 0.
`

// cmdEcho is `impair echo`.
func cmdEcho(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("echo", flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() { fmt.Fprint(stderr, echoUsage) }
	var listen addrFlag
	fs.Var(&listen, "listen", "HOST:PORT to answer probes on (required)")
	if err := fs.Parse(args); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			return 0
		}
		return 2
	}
	if fs.NArg() > 0 {
		fmt.Fprintf(stderr, "impair echo: unexpected argument %q\n", fs.Arg(0))
		return 2
	}
	if !listen.set {
		fmt.Fprintf(stderr, "impair echo: --listen: required\n")
		return 2
	}
	log := slog.New(slog.NewTextHandler(stderr, nil))
	conn, err := net.ListenUDP("udp", net.UDPAddrFromAddrPort(listen.ap))
	if err != nil {
		fmt.Fprintf(stderr, "impair echo: --listen %s: %v\n", listen.ap, err)
		return 1
	}
	ctx, stop := signal.NotifyContext(context.Background(), syscall.SIGINT, syscall.SIGTERM)
	defer stop()
	go func() {
		<-ctx.Done()
		conn.Close() // ends echoLoop with net.ErrClosed
	}()
	log.Info("echoing probes", "listen", conn.LocalAddr().String())
	answered, ignored, err := echoLoop(conn)
	log.Info("echo stopped", "answered", answered, "ignored", ignored)
	if err != nil {
		fmt.Fprintf(stderr, "impair echo: %v\n", err)
		return 1
	}
	return 0
}

// echoLoop answers probes on conn until it is closed.
func echoLoop(conn *net.UDPConn) (answered, ignored uint64, err error) {
	buf := make([]byte, 65536)
	for {
		n, from, err := conn.ReadFromUDPAddrPort(buf)
		recv := time.Now().UnixNano()
		if err != nil {
			if errors.Is(err, net.ErrClosed) {
				return answered, ignored, nil
			}
			return answered, ignored, fmt.Errorf("reading: %w", err)
		}
		if _, err := readProbe(buf[:n]); err != nil {
			ignored++
			continue
		}
		stampEcho(buf[:n], recv, time.Now().UnixNano())
		if _, err := conn.WriteToUDPAddrPort(buf[:n], from); err != nil {
			if errors.Is(err, net.ErrClosed) {
				return answered, ignored, nil
			}
			ignored++ // the kernel refused (e.g. ICMP unreachable reported): keep answering others
			continue
		}
		answered++
	}
}
