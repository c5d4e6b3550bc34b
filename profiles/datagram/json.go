package datagram

import (
	"fmt"
	"strconv"
	"strings"
	"unicode/utf8"
	"unsafe"
)

// JSON datagrams: each value is found by a JSON pointer (RFC 6901,
// "JavaScript Object Notation (JSON) Pointer", 2013) into the datagram, a
// JSON text (RFC 8259). The lookup walks the bytes in place: it never
// allocates and never panics, whatever the payload. Where an object has a
// member name twice, the last one counts (as Go's encoding/json does), so
// every object on the way is read to its end. Only what the walk passes
// through is checked: bytes after the objects it reads are not.

// ErrBadJSON: a JSON datagram is not JSON where the walk to a value
// passes, or the pointer leads nowhere (a missing member or index).
var ErrBadJSON = &Error{Reason: "bad_json"}

// ParsePointer checks a JSON pointer and returns its reference tokens,
// unescaped (~1 is "/", ~0 is "~"). "" is the whole document.
func ParsePointer(p string) ([]string, error) {
	if p == "" {
		return nil, nil
	}
	if p[0] != '/' {
		return nil, fmt.Errorf("want a JSON pointer starting with / (RFC 6901), got %q", p)
	}
	if !utf8.ValidString(p) {
		return nil, fmt.Errorf("want a JSON pointer in UTF-8, got %q", p)
	}
	parts := strings.Split(p[1:], "/")
	for i, t := range parts {
		for j := 0; j < len(t); j++ {
			if t[j] == '~' && (j+1 == len(t) || (t[j+1] != '0' && t[j+1] != '1')) {
				return nil, fmt.Errorf("JSON pointer %q: ~ must be followed by 0 or 1 (~0 is ~, ~1 is /)", p)
			}
		}
		parts[i] = strings.ReplaceAll(strings.ReplaceAll(t, "~1", "/"), "~0", "~")
	}
	return parts, nil
}

// jsonLookup returns the bytes of the value at the pointer's tokens.
func jsonLookup(b []byte, tokens []string) ([]byte, bool) {
	i := skipSpace(b, 0)
	for _, tok := range tokens {
		if i >= len(b) {
			return nil, false
		}
		switch b[i] {
		case '{':
			j, ok := memberValue(b, i, tok)
			if !ok {
				return nil, false
			}
			i = j
		case '[':
			j, ok := elementValue(b, i, tok)
			if !ok {
				return nil, false
			}
			i = j
		default:
			return nil, false
		}
	}
	end, ok := skipValue(b, i)
	if !ok {
		return nil, false
	}
	return b[i:end], true
}

func skipSpace(b []byte, i int) int {
	for i < len(b) && (b[i] == ' ' || b[i] == '\t' || b[i] == '\n' || b[i] == '\r') {
		i++
	}
	return i
}

// memberValue finds, in the object at b[i] = '{', the last member named
// tok and returns the index of its value.
func memberValue(b []byte, i int, tok string) (int, bool) {
	found := -1
	i = skipSpace(b, i+1)
	if i < len(b) && b[i] == '}' {
		return 0, false
	}
	for {
		if i >= len(b) || b[i] != '"' {
			return 0, false
		}
		end, ok := skipString(b, i)
		if !ok {
			return 0, false
		}
		match := keyEquals(b[i+1:end-1], tok)
		i = skipSpace(b, end)
		if i >= len(b) || b[i] != ':' {
			return 0, false
		}
		i = skipSpace(b, i+1)
		if match {
			found = i
		}
		if i, ok = skipValue(b, i); !ok {
			return 0, false
		}
		i = skipSpace(b, i)
		if i >= len(b) {
			return 0, false
		}
		switch b[i] {
		case ',':
			i = skipSpace(b, i+1)
		case '}':
			return found, found >= 0
		default:
			return 0, false
		}
	}
}

// elementValue finds element tok (a decimal index without leading zeros)
// of the array at b[i] = '['.
func elementValue(b []byte, i int, tok string) (int, bool) {
	if tok == "" || len(tok) > 9 || (len(tok) > 1 && tok[0] == '0') {
		return 0, false
	}
	idx := 0
	for k := 0; k < len(tok); k++ {
		if tok[k] < '0' || tok[k] > '9' {
			return 0, false
		}
		idx = idx*10 + int(tok[k]-'0')
	}
	i = skipSpace(b, i+1)
	if i < len(b) && b[i] == ']' {
		return 0, false
	}
	for k := 0; ; k++ {
		if k == idx {
			return i, i < len(b)
		}
		var ok bool
		if i, ok = skipValue(b, i); !ok {
			return 0, false
		}
		i = skipSpace(b, i)
		if i >= len(b) || b[i] != ',' {
			return 0, false // ']' before the index: no such element
		}
		i = skipSpace(b, i+1)
	}
}

// skipString returns the index after the string at b[i] = '"'.
func skipString(b []byte, i int) (int, bool) {
	for j := i + 1; j < len(b); j++ {
		switch c := b[j]; {
		case c == '\\':
			j++
		case c == '"':
			return j + 1, true
		case c < 0x20:
			return 0, false
		}
	}
	return 0, false
}

// skipValue returns the index after the value starting at b[i]. Nested
// containers are skipped by counting brackets (no recursion: a deep
// payload costs no stack), strings by their quotes.
func skipValue(b []byte, i int) (int, bool) {
	if i >= len(b) {
		return 0, false
	}
	switch c := b[i]; {
	case c == '"':
		return skipString(b, i)
	case c == '{' || c == '[':
		depth := 0
		for j := i; j < len(b); j++ {
			switch b[j] {
			case '"':
				end, ok := skipString(b, j)
				if !ok {
					return 0, false
				}
				j = end - 1
			case '{', '[':
				depth++
			case '}', ']':
				depth--
				if depth == 0 {
					return j + 1, true
				}
			}
		}
		return 0, false
	case c == 't' || c == 'f' || c == 'n':
		for _, lit := range [...]string{"true", "false", "null"} {
			if len(b)-i >= len(lit) && string(b[i:i+len(lit)]) == lit {
				return i + len(lit), true
			}
		}
		return 0, false
	default:
		j := i
		for j < len(b) && (b[j] == '-' || b[j] == '+' || b[j] == '.' || b[j] == 'e' || b[j] == 'E' || (b[j] >= '0' && b[j] <= '9')) {
			j++
		}
		if j == i {
			return 0, false
		}
		return j, true
	}
}

// keyEquals reports whether the raw (escaped) member name equals tok.
func keyEquals(raw []byte, tok string) bool {
	k := 0
	for i := 0; i < len(raw); {
		c := raw[i]
		if c != '\\' {
			if k >= len(tok) || tok[k] != c {
				return false
			}
			i, k = i+1, k+1
			continue
		}
		if i+1 >= len(raw) {
			return false
		}
		var r rune
		switch raw[i+1] {
		case '"', '\\', '/':
			r = rune(raw[i+1])
			i += 2
		case 'b':
			r, i = '\b', i+2
		case 'f':
			r, i = '\f', i+2
		case 'n':
			r, i = '\n', i+2
		case 'r':
			r, i = '\r', i+2
		case 't':
			r, i = '\t', i+2
		case 'u':
			u, ok := hex4(raw, i+2)
			if !ok {
				return false
			}
			i += 6
			r = rune(u)
			if u >= 0xD800 && u < 0xDC00 { // a surrogate pair
				if i+1 < len(raw) && raw[i] == '\\' && raw[i+1] == 'u' {
					if lo, ok := hex4(raw, i+2); ok && lo >= 0xDC00 && lo < 0xE000 {
						r = (rune(u)-0xD800)<<10 + (rune(lo) - 0xDC00) + 0x10000
						i += 6
					} else {
						r = utf8.RuneError
					}
				} else {
					r = utf8.RuneError
				}
			} else if u >= 0xDC00 && u < 0xE000 {
				r = utf8.RuneError
			}
		default:
			return false
		}
		var buf [utf8.UTFMax]byte
		n := utf8.EncodeRune(buf[:], r)
		if k+n > len(tok) || tok[k:k+n] != string(buf[:n]) {
			return false
		}
		k += n
	}
	return k == len(tok)
}

func hex4(b []byte, i int) (uint16, bool) {
	if i+4 > len(b) {
		return 0, false
	}
	var v uint16
	for _, c := range b[i : i+4] {
		var d byte
		switch {
		case c >= '0' && c <= '9':
			d = c - '0'
		case c >= 'a' && c <= 'f':
			d = c - 'a' + 10
		case c >= 'A' && c <= 'F':
			d = c - 'A' + 10
		default:
			return 0, false
		}
		v = v<<4 | uint16(d)
	}
	return v, true
}

// isJSONNumber: -?(0|[1-9]digits)(.digits)?([eE][+-]?digits)? (RFC 8259 §6).
func isJSONNumber(b []byte) bool {
	i := 0
	if i < len(b) && b[i] == '-' {
		i++
	}
	switch {
	case i < len(b) && b[i] == '0':
		i++
	case i < len(b) && b[i] >= '1' && b[i] <= '9':
		i = digitsFrom(b, i)
	default:
		return false
	}
	if i < len(b) && b[i] == '.' {
		if j := digitsFrom(b, i+1); j > i+1 {
			i = j
		} else {
			return false
		}
	}
	if i < len(b) && (b[i] == 'e' || b[i] == 'E') {
		i++
		if i < len(b) && (b[i] == '+' || b[i] == '-') {
			i++
		}
		if j := digitsFrom(b, i); j > i {
			i = j
		} else {
			return false
		}
	}
	return i == len(b)
}

// digitsFrom returns the index after the decimal digits from b[i].
func digitsFrom(b []byte, i int) int {
	for i < len(b) && b[i] >= '0' && b[i] <= '9' {
		i++
	}
	return i
}

// jsonFloat reads the number at the field's pointer: ErrBadJSON when it
// is not found, ErrNotNumber when it is not a JSON number, ErrNotFinite
// when it overflows.
func jsonFloat(payload []byte, f Field) (float64, error) {
	v, ok := jsonLookup(payload, f.tokens)
	if !ok {
		return 0, ErrBadJSON
	}
	if !isJSONNumber(v) {
		return 0, ErrNotNumber
	}
	x, err := strconv.ParseFloat(unsafe.String(unsafe.SliceData(v), len(v)), 64)
	if err != nil {
		return 0, ErrNotFinite
	}
	return x, nil
}

// jsonCounter reads a non-negative integer (decimal digits, at most 19).
func jsonCounter(payload []byte, f Field) (uint64, error) {
	v, ok := jsonLookup(payload, f.tokens)
	if !ok {
		return 0, ErrBadJSON
	}
	s, ok := parseCounter(v)
	if !ok || (len(v) > 1 && v[0] == '0') {
		return 0, ErrBadSequence
	}
	return s, nil
}

// SetPointer sets a JSON field's pointer, checked (ParsePointer).
func (f *Field) SetPointer(p string) error {
	toks, err := ParsePointer(p)
	if err != nil {
		return err
	}
	f.Pointer, f.tokens = p, toks
	return nil
}
