// The trip request datagram: what `monitor run --trip-to` sends and
// `impair run --trip-listen` accepts. It is plain text, one line without a
// newline:
//
//	rigwire-trip 1 <reason>
//
// where 1 is the format version and reason is one token of lowercase
// letters and underscores ("max_abs_error"). A whole datagram is at most
// MaxLen bytes; anything else is not a trip request.

package trip

import (
	"errors"
	"fmt"
	"strings"
)

// Prefix starts every trip request: magic and version.
const Prefix = "rigwire-trip 1 "

// MaxLen is the longest valid trip request, in bytes.
const MaxLen = 64

// MaxReason is the longest reason that fits.
const MaxReason = MaxLen - len(Prefix)

// Unspecified is the reason Encode puts when it is given none.
const Unspecified = "unspecified"

// Errors of Decode.
var (
	ErrTooLong   = errors.New("longer than 64 bytes")
	ErrNotTrip   = errors.New(`not a trip request (want "rigwire-trip 1 <reason>")`)
	ErrBadReason = errors.New("reason: want one token of a-z and _")
)

// Encode returns the trip request for reason. It always returns a valid
// request: uppercase letters are lowered, other characters outside a-z
// and _ become _, the reason is cut to fit MaxLen, and an empty reason is
// Unspecified.
func Encode(reason string) []byte {
	var b strings.Builder
	for _, c := range strings.ToLower(reason) {
		if b.Len() == MaxReason {
			break
		}
		if c >= 'a' && c <= 'z' || c == '_' {
			b.WriteRune(c)
		} else {
			b.WriteByte('_')
		}
	}
	r := b.String()
	if r == "" {
		r = Unspecified
	}
	return []byte(Prefix + r)
}

// Decode returns the reason of a trip request, or an error saying why p
// is not one.
func Decode(p []byte) (string, error) {
	if len(p) > MaxLen {
		return "", fmt.Errorf("%w (%d bytes)", ErrTooLong, len(p))
	}
	if len(p) < len(Prefix) || string(p[:len(Prefix)]) != Prefix {
		return "", ErrNotTrip
	}
	r := p[len(Prefix):]
	if len(r) == 0 {
		return "", ErrBadReason
	}
	for _, c := range r {
		if !(c >= 'a' && c <= 'z' || c == '_') {
			return "", ErrBadReason
		}
	}
	return string(r), nil
}
