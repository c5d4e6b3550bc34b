package trip

import (
	"bytes"
	"errors"
	"strings"
	"testing"
)

func TestRoundTrip(t *testing.T) {
	for _, tc := range []struct{ in, want string }{
		{"max_abs_error", "max_abs_error"},
		{"Max-Ratio", "max_ratio"},
		{"", Unspecified},
		{"second moment!", "second_moment_"},
		{strings.Repeat("a", 100), strings.Repeat("a", MaxReason)},
		{"ünï", "_n_"},
	} {
		p := Encode(tc.in)
		if len(p) > MaxLen {
			t.Errorf("Encode(%q): %d bytes", tc.in, len(p))
		}
		got, err := Decode(p)
		if err != nil || got != tc.want {
			t.Errorf("Decode(Encode(%q)) = %q, %v; want %q", tc.in, got, err, tc.want)
		}
	}
	if got := string(Encode("max_abs_error")); got != "rigwire-trip 1 max_abs_error" {
		t.Errorf("wire text %q", got)
	}
}

func TestDecodeRejects(t *testing.T) {
	for _, tc := range []struct {
		in   string
		want error
	}{
		{"", ErrNotTrip},
		{"rigwire-trip 1", ErrNotTrip},
		{"rigwire-trip 2 x", ErrNotTrip},
		{"RIGWIRE-TRIP 1 x", ErrNotTrip},
		{"rigwire-trip 1 ", ErrBadReason},
		{"rigwire-trip 1 two words", ErrBadReason},
		{"rigwire-trip 1 reason\n", ErrBadReason},
		{"rigwire-trip 1 Upper", ErrBadReason},
		{"rigwire-trip 1 " + strings.Repeat("a", MaxReason+1), ErrTooLong},
		{string(make([]byte, 65536)), ErrTooLong},
	} {
		if _, err := Decode([]byte(tc.in)); !errors.Is(err, tc.want) {
			t.Errorf("Decode(%.30q) = %v, want %v", tc.in, err, tc.want)
		}
	}
	if r, err := Decode([]byte("rigwire-trip 1 " + strings.Repeat("a", MaxReason))); err != nil || len(r) != MaxReason {
		t.Errorf("longest valid request: %q, %v", r, err)
	}
}

func FuzzDecode(f *testing.F) {
	f.Add([]byte("rigwire-trip 1 max_abs_error"))
	f.Add([]byte("rigwire-trip 1 "))
	f.Add([]byte("rigwire-trip 1 a b"))
	f.Add([]byte{0xff, 0, 1})
	f.Fuzz(func(t *testing.T, p []byte) {
		r, err := Decode(p)
		if err != nil {
			return
		}
		// A decoded reason encodes back to the same datagram.
		if q := Encode(r); !bytes.Equal(q, p) {
			t.Fatalf("Decode(%q) = %q, Encode gives %q", p, r, q)
		}
	})
}

func FuzzEncode(f *testing.F) {
	f.Add("max_ratio")
	f.Add("")
	f.Fuzz(func(t *testing.T, s string) {
		if _, err := Decode(Encode(s)); err != nil {
			t.Fatalf("Encode(%q) = %q does not decode: %v", s, Encode(s), err)
		}
	})
}
