package main

import (
	"fmt"
	"io"
	"log/slog"
	"net"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
	"rigwire/emulate/probe"
)

const echoUsage = `usage: impair echo --listen HOST:PORT

Answers probes from impair probe: each probe datagram is sent back to its
source at once, stamped with the times (wall clock) it was received and
sent back, so that a prober whose clock is synchronised with this one can
split the round trip into its two one-way delays. Datagrams that are not
probes are counted and ignored. Runs until SIGINT or SIGTERM.
`

var echoExits = exitcode.Help(cli.PlainStatuses, map[int]string{
	exitcode.OK:       "stopped on SIGINT or SIGTERM",
	exitcode.Failure:  "error while running (the socket)",
	exitcode.BadInput: "bad usage",
})

// cmdEcho is `impair echo`.
func cmdEcho(args []string, stdout, stderr io.Writer) error {
	fs := cli.NewFlags("impair echo", echoUsage, echoExits)
	var listen cli.AddrFlag
	fs.Var(&listen, "listen", "`HOST:PORT` to answer probes on (required)")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if fs.NArg() > 0 {
		return cli.Usagef("unexpected argument %q", fs.Arg(0))
	}
	if !listen.Given {
		return cli.Usagef("--listen: required")
	}
	log := slog.New(slog.NewTextHandler(stderr, nil))
	conn, err := net.ListenUDP("udp", net.UDPAddrFromAddrPort(listen.Addr))
	if err != nil {
		return fmt.Errorf("--listen %s: %w", listen.Addr, err)
	}
	ctx, stop := cli.SignalContext()
	defer stop()
	go func() {
		<-ctx.Done()
		conn.Close() // ends probe.Echo
	}()
	log.Info("echoing probes", "listen", conn.LocalAddr().String())
	answered, ignored, err := probe.Echo(conn)
	log.Info("echo stopped", "answered", answered, "ignored", ignored)
	return err
}
