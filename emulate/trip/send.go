package trip

import (
	"log/slog"
	"net"
)

// Copies is how many copies of a trip request Send sends: the control
// path may lose datagrams, and the relay counts the extra ones as
// repeated (common practice for a one-shot command over UDP).
const Copies = 3

// Send writes Copies copies of the trip request for reason to conn (a
// connected UDP socket, the relay's trip socket at the other end). A copy
// that fails is logged and the next one tried; Send returns how many went
// out.
func Send(conn net.Conn, reason string, log *slog.Logger) int {
	msg := Encode(reason)
	sent := 0
	for range Copies {
		if _, err := conn.Write(msg); err != nil {
			log.Error("trip request not sent", "to", conn.RemoteAddr().String(), "err", err)
			continue
		}
		sent++
	}
	return sent
}
