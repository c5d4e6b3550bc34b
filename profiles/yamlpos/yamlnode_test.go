package yamlpos

import (
	"errors"
	"testing"
)

func TestErrorFormat(t *testing.T) {
	tests := []struct {
		name string
		err  *Error
		want string
	}{
		{"full", &Error{File: "pick.yaml", Line: 7, Key: "sensor_to_controller", Msg: `unknown key "lossy"`}, `pick.yaml:7: sensor_to_controller: unknown key "lossy"`},
		{"root key", &Error{File: "pick.yaml", Line: 3, Msg: `unknown key "x"`}, `pick.yaml:3: unknown key "x"`},
		{"no line", &Error{File: "pick.yaml", Msg: "empty document"}, `pick.yaml: empty document`},
		{"no file", &Error{Line: 2, Key: "a", Msg: "bad"}, `line 2: a: bad`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := tt.err.Error(); got != tt.want {
				t.Errorf("got %q, want %q", got, tt.want)
			}
		})
	}
}

// TestFieldDecoding checks each helper on a small document, for the value
// it returns or the message it gives.
func TestFieldDecoding(t *testing.T) {
	const doc = `period: 10ms
seconds: 0.003
neg: -1ms
count: 42
name: 42
ratio: 1.5
vec: [0.5, 1]
mat: [[0, 1], [0, -2]]
ragged: [[1, 2], [3]]
word: abc
nested:
  a: 1
  b: {c: 2}
`
	root, err := Document("loop.yaml", []byte(doc))
	if err != nil {
		t.Fatal(err)
	}
	all := []string{"period", "seconds", "neg", "count", "name", "ratio", "vec", "mat", "ragged", "word", "nested"}
	f, err := root.Mapping(all...)
	if err != nil {
		t.Fatal(err)
	}
	check := func(name string, err error, want string) {
		t.Helper()
		got := "<nil>"
		if err != nil {
			got = err.Error()
		}
		if got != want {
			t.Errorf("%s: got %q, want %q", name, got, want)
		}
	}
	if v, err := f["period"].Duration(); err != nil || v != 0.01 {
		t.Errorf("period = %v, %v; want 0.01", v, err)
	}
	if v, err := f["seconds"].Duration(); err != nil || v != 0.003 {
		t.Errorf("seconds = %v, %v; want 0.003", v, err)
	}
	_, err = f["neg"].DurationIn(0, 1)
	check("neg", err, `loop.yaml:3: neg: want a duration in [0s, 1s], got "-1ms"`)
	_, err = f["word"].Duration()
	check("word", err, `loop.yaml:10: word: want a duration ("3ms") or seconds, got "abc"`)
	if v, err := f["count"].Uint64(); err != nil || v != 42 {
		t.Errorf("count = %v, %v", v, err)
	}
	if v, err := f["name"].Text(); err != nil || v != "42" {
		t.Errorf("name = %q, %v", v, err)
	}
	_, err = f["ratio"].FloatIn(0, 1)
	check("ratio", err, `loop.yaml:6: ratio: want a number in [0, 1], got "1.5"`)
	_, err = f["neg"].Positive()
	check("positive", err, `loop.yaml:3: neg: want a number > 0, got "-1ms"`)
	if v, err := f["vec"].Vector(); err != nil || len(v) != 2 || v[1] != 1 {
		t.Errorf("vec = %v, %v", v, err)
	}
	if m, err := f["mat"].Dense(2, 2); err != nil || m.At(1, 1) != -2 {
		t.Errorf("mat = %v, %v", m, err)
	}
	_, err = f["mat"].Dense(1, 1)
	check("shape", err, `loop.yaml:8: mat: want 1×1, got 2×2`)
	_, err = f["ragged"].Matrix()
	check("ragged", err, `loop.yaml:9: ragged[1]: want 2 numbers in each row, got 1`)
	n, err := f["nested"].Mapping("a", "b")
	if err != nil {
		t.Fatal(err)
	}
	_, err = n["b"].Mapping("d")
	check("unknown nested", err, `loop.yaml:13: nested.b: unknown key "c" (want one of: d)`)
	_, err = root.Mapping("period")
	check("unknown root", err, `loop.yaml:2: unknown key "seconds" (want one of: period)`)

	var pe *Error
	if !errors.As(err, &pe) || pe.Line != 2 {
		t.Errorf("errors.As: got %#v", pe)
	}
}

// laughs is a small document whose aliases expand to 10⁹ values.
const laughs = `a: &a [x, x, x, x, x, x, x, x, x, x]
b: &b [*a, *a, *a, *a, *a, *a, *a, *a, *a, *a]
c: &c [*b, *b, *b, *b, *b, *b, *b, *b, *b, *b]
d: &d [*c, *c, *c, *c, *c, *c, *c, *c, *c, *c]
e: &e [*d, *d, *d, *d, *d, *d, *d, *d, *d, *d]
f: &f [*e, *e, *e, *e, *e, *e, *e, *e, *e, *e]
g: &g [*f, *f, *f, *f, *f, *f, *f, *f, *f, *f]
h: &h [*g, *g, *g, *g, *g, *g, *g, *g, *g, *g]
i: &i [*h, *h, *h, *h, *h, *h, *h, *h, *h, *h]
`

func TestDocumentErrors(t *testing.T) {
	tests := []struct {
		name, data, want string
	}{
		{"empty", "", "x.yaml: empty document"},
		{"syntax", "a: b: c\n", "x.yaml: mapping values are not allowed in this context"},
		{"syntax with line", "a: 1\n\tb: 2\n", "x.yaml:2: found a tab character that violates indentation"},
		{"two docs", "a: 1\n---\nb: 2\n", "x.yaml:3: want one YAML document, got more"},
		{"duplicate", "a: 1\na: 2\n", `x.yaml:2: key "a" given twice`},
		{"alias bomb", laughs, `x.yaml:1: want at most 100000 values with aliases expanded, got more`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			root, err := Document("x.yaml", []byte(tt.data))
			if err == nil {
				_, err = root.Mapping("a", "b")
			}
			if err == nil || err.Error() != tt.want {
				t.Errorf("got %v, want %q", err, tt.want)
			}
		})
	}
}

// TreeSize counts every value once per place it stands, aliases
// expanded, and stops past its limit.
func TestTreeSize(t *testing.T) {
	const unlimited = 1 << 40
	cases := []struct {
		name      string
		data      string
		limit     int
		wantCount int
		wantOK    bool
	}{
		{"scalar", "3ms\n", unlimited, 1, true},
		{"mapping, its keys and values", "a: 1\nb: [2, 3]\n", unlimited, 7, true},
		{"alias counted where it stands", "a: &x [1, 2]\nb: *x\n", unlimited, 9, true},
		{"at the limit", "a: 1\nb: [2, 3]\n", 7, 7, true},
		{"past the limit", "a: 1\nb: [2, 3]\n", 6, 7, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			root, err := Document("x.yaml", []byte(c.data))
			if err != nil {
				t.Fatal(err)
			}
			n, ok := TreeSize(root.Node, c.limit)
			if n != c.wantCount || ok != c.wantOK {
				t.Errorf("TreeSize = %d, %v; want %d, %v", n, ok, c.wantCount, c.wantOK)
			}
		})
	}
}
