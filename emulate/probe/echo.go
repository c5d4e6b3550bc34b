package probe

import (
	"errors"
	"fmt"
	"net"
	"time"
)

// Echo answers probes on conn until it is closed: each probe is sent back
// to its source at once, stamped with the times (wall clock) it was
// received and sent back. Datagrams that are not probes, and answers the
// kernel refuses to send, are counted as ignored. Closing conn ends Echo
// with a nil error.
func Echo(conn *net.UDPConn) (answered, ignored uint64, err error) {
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
		if _, err := Read(buf[:n]); err != nil {
			ignored++
			continue
		}
		StampEcho(buf[:n], recv, time.Now().UnixNano())
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
