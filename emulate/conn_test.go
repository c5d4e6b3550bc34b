package emulate

import (
	"net/netip"
	"testing"
)

// Addresses the socket cannot reach are spelled so that the kernel refuses
// them: never a panic (they used to panic in netip's As4).
func TestSockaddrNeverPanics(t *testing.T) {
	for _, ap := range []netip.AddrPort{{}, netip.MustParseAddrPort("[::1]:9"), netip.MustParseAddrPort("127.0.0.1:9")} {
		for _, fam := range []int{4, 6} {
			c := listenOn(t, map[int]string{4: "127.0.0.1:0", 6: "[::1]:0"}[fam])
			bc, err := newBatchConn(c)
			if err != nil {
				t.Fatal(err)
			}
			ms := []message{{buf: []byte("x"), n: 1, addr: ap}}
			reachable := ap.IsValid() && family(ap.Addr()) == fam
			if _, err := bc.writeBatch(ms); (err == nil) != reachable {
				t.Errorf("IPv%d socket to %v: error %v, want one only when unreachable", fam, ap, err)
			}
		}
	}
}
