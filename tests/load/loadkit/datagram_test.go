package loadkit

import (
	"errors"
	"testing"
)

func TestHeaderRoundTrip(t *testing.T) {
	cases := []struct {
		name string
		h    Header
	}{
		{"zero", Header{}},
		{"typical", Header{Run: 0xdeadbeef, Seq: 123456, SentNs: 987654321012}},
		{"extremes", Header{Run: ^uint32(0), Seq: ^uint64(0), SentNs: -1}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			b := make([]byte, 64)
			c.h.Put(b)
			got, err := ParseHeader(b)
			if err != nil {
				t.Fatalf("ParseHeader: %v", err)
			}
			if got != c.h {
				t.Fatalf("got %+v, want %+v", got, c.h)
			}
		})
	}
}

func TestParseHeaderRejects(t *testing.T) {
	good := make([]byte, HeaderLen)
	Header{Run: 1, Seq: 2, SentNs: 3}.Put(good)
	badMagic := append([]byte(nil), good...)
	badMagic[0] ^= 0xff
	cases := []struct {
		name string
		b    []byte
		want error
	}{
		{"empty", nil, ErrShort},
		{"one short", good[:HeaderLen-1], ErrShort},
		{"foreign", badMagic, ErrNotLoads},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if _, err := ParseHeader(c.b); !errors.Is(err, c.want) {
				t.Fatalf("got %v, want %v", err, c.want)
			}
		})
	}
}
