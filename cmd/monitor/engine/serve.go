package engine

import (
	"context"
	"errors"
	"net"
)

// Serve reads datagrams from conn and feeds them to the monitor until ctx
// ends (it then closes conn) or conn fails. Its buffer is one datagram
// longer than MaxDatagram, so that a longer datagram (truncated by the
// read) is seen as oversized; nothing is allocated per datagram, and
// memory stays fixed whatever the rate: a flood costs CPU, and the kernel
// drops what the socket buffer cannot hold.
func (m *Monitor) Serve(ctx context.Context, conn *net.UDPConn) error {
	stop := context.AfterFunc(ctx, func() { conn.Close() })
	defer stop()
	buf := make([]byte, m.opts.MaxDatagram+1)
	for {
		n, _, err := conn.ReadFromUDPAddrPort(buf)
		if err != nil {
			if errors.Is(err, net.ErrClosed) && ctx.Err() != nil {
				return nil
			}
			var ne net.Error
			if errors.As(err, &ne) && ne.Timeout() {
				continue
			}
			return err
		}
		m.Feed(buf[:n], m.now())
	}
}
