package datagram

import (
	"bytes"
	"encoding/json"
	"math"
	"strconv"
	"testing"
	"unicode/utf8"
)

// fuzzPointers are the pointers the fuzz target resolves in every input.
var fuzzPointers = []string{"", "/a", "/a/0", "/a/1/b", "/b/c", "/0", "/a~1b", "/m~0n", "/é", "/seq"}

// refLookup resolves a pointer with Go's encoding/json (the reference):
// the raw text of a number there, and whether there is one.
func refLookup(doc []byte, tokens []string) (string, bool) {
	var v any
	d := json.NewDecoder(bytes.NewReader(doc))
	d.UseNumber()
	if err := d.Decode(&v); err != nil {
		return "", false
	}
	for _, t := range tokens {
		switch x := v.(type) {
		case map[string]any:
			var ok bool
			if v, ok = x[t]; !ok {
				return "", false
			}
		case []any:
			i, err := strconv.Atoi(t)
			if err != nil || i < 0 || i >= len(x) || (len(t) > 1 && t[0] == '0') || t[0] == '+' {
				return "", false
			}
			v = x[i]
		default:
			return "", false
		}
	}
	n, ok := v.(json.Number)
	return string(n), ok
}

// FuzzJSONOutput: whatever the bytes, the JSON decode never panics; on a
// valid UTF-8 JSON document it finds exactly the numbers Go's
// encoding/json finds at each pointer (the same value, or an error where
// there is none).
func FuzzJSONOutput(f *testing.F) {
	for _, s := range []string{
		`{"a": [1.5, {"b": -2e3}], "seq": 17}`, `{"a/b": 3, "m~n": 4, "é": 5}`, `[7, 8]`, `42`,
		`{"a": 1, "a": 2}`, `{"b": {"c": 0.25}, "a": "x"}`, `{"\u0061": [0]}`, `{"a": [true, null, "]", {"b": 1e400}]}`,
		`{"a":[1,2`, `{"seq": 007}`, "", `{"b":{"c":-0}}`,
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, doc []byte) {
		for _, p := range fuzzPointers {
			var fl Field
			if err := fl.SetPointer(p); err != nil {
				t.Fatal(err)
			}
			got, err := jsonFloat(doc, fl)
			if !json.Valid(doc) || !utf8.Valid(doc) {
				continue // no panic is all that is asked
			}
			raw, ok := refLookup(doc, fl.tokens)
			want, perr := strconv.ParseFloat(raw, 64)
			switch {
			case !ok && err == nil:
				t.Errorf("%q at %q: decoded %g, encoding/json finds no number", doc, p, got)
			case ok && perr == nil && (err != nil || got != want && !(math.IsNaN(got) && math.IsNaN(want))):
				t.Errorf("%q at %q: decoded %g (%v), encoding/json %s", doc, p, got, err, raw)
			}
		}
	})
}

// TestJSONLayout: a JSON layout decodes outputs and the sequence by
// pointer, says why a datagram does not decode, and never allocates.
func TestJSONLayout(t *testing.T) {
	d := Layout{Format: "json", Outputs: make([]Field, 2), Sequence: &Field{}}
	for i, p := range []string{"/y/0", "/pos~1x"} {
		if err := d.Outputs[i].SetPointer(p); err != nil {
			t.Fatal(err)
		}
	}
	if err := d.Sequence.SetPointer("/seq"); err != nil {
		t.Fatal(err)
	}
	y := make([]float64, 2)
	good := []byte(`{"seq": 12, "y": [0.5, 9], "pos/x": -1.25e-3, "note": "ok"}`)
	seq, has, err := d.Output(good, y)
	if err != nil || !has || seq != 12 || y[0] != 0.5 || y[1] != -1.25e-3 {
		t.Fatalf("decoded %d %v %v %v", seq, has, y, err)
	}
	for payload, want := range map[string]*Error{
		`{"seq": 12, "y": [0.5], "pos/x": 1}`:           nil,
		`{"seq": 12, "y": [], "pos/x": 1}`:              ErrBadJSON,
		`{"seq": 12, "y": ["0.5"], "pos/x": 1}`:         ErrNotNumber,
		`{"seq": 12, "y": [1e999], "pos/x": 1}`:         ErrNotFinite,
		`{"seq": 12, "y": [1e60], "pos/x": 1}`:          ErrOutOfRange,
		`{"seq": -1, "y": [1], "pos/x": 1}`:             ErrBadSequence,
		`{"seq": 1.5, "y": [1], "pos/x": 1}`:            ErrBadSequence,
		`{"seq": 12, "y": [1], "pos/x": 1`:              ErrBadJSON, // an object must close: a later member may repeat a name
		`{"seq": 12, "y": [1, "pos/x": 1}`:              ErrBadJSON,
		`not json`:                                      ErrBadJSON,
		`{"seq": 12, "y": [0.5], "pos/x": 1, "seq": 3}`: nil,
	} {
		_, _, err := d.Output([]byte(payload), y)
		if want == nil && err != nil || want != nil && err != want {
			t.Errorf("%s: %v, want %v", payload, err, want)
		}
	}
	if s, _, _ := d.Output([]byte(`{"seq": 12, "y": [0.5], "pos/x": 1, "seq": 3}`), y); s != 3 {
		t.Errorf("a repeated member: sequence %d, want the last, 3", s)
	}
	if n := testing.AllocsPerRun(200, func() { d.Output(good, y) }); n != 0 {
		t.Errorf("Output allocates %.0f times per datagram", n)
	}
	for _, bad := range []string{"y", "/a~2", "/a~", "/\xff"} {
		var f Field
		if err := f.SetPointer(bad); err == nil {
			t.Errorf("pointer %q accepted", bad)
		}
	}
}
