package engine

import (
	"encoding/binary"
	"strconv"
	"testing"
	"time"

	"rigwire/estimate"
)

// BenchmarkFeed reports the cost of one datagram through Feed (decode,
// sequence check, run and two windows).
func BenchmarkFeed(b *testing.B) {
	for _, c := range []struct{ name, decode string }{{"text", textDecode}, {"binary", binaryDecode}} {
		b.Run(c.name, func(b *testing.B) {
			m, err := New(testLoop(b, c.decode), &estimate.Prediction{}, Options{})
			if err != nil {
				b.Fatal(err)
			}
			// Each datagram is encoded into one buffer with the next
			// sequence number, so every one takes the in-order path.
			buf := make([]byte, 0, 64)
			tmpl := binDatagram(0, 0.79)
			now := time.Now()
			b.ReportAllocs()
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				if c.name == "text" {
					buf = append(strconv.AppendInt(buf[:0], int64(i), 10), ",0.79\n"...)
				} else {
					buf = append(buf[:0], tmpl...)
					binary.BigEndian.PutUint32(buf, uint32(i))
				}
				m.Feed(buf, now)
			}
		})
	}
}
