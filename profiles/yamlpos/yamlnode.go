package yamlpos

// Helpers for decoding YAML files by walking yaml.v3 nodes, so that every
// error can name the file, the line and the key path, and unknown keys are
// caught (yaml.v3 loses KnownFields inside custom unmarshalers, go-yaml
// issue #460, so keys are checked on the node instead).
//
// Every YAML file of the project is read with them: the profile, loop and
// scenario files (profiles), the links file (emulate/links) and the lab
// topology (deploy/lab). A typical decoder:
//
//	root, err := yamlpos.Document("loop.yaml", data)
//	if err != nil {
//		return err
//	}
//	fields, err := root.Mapping("period", "plant", "profile")
//	if err != nil {
//		return err
//	}
//	if f, ok := fields["period"]; ok {
//		period, err = f.Duration()   // "10ms" or 0.01
//		...
//	}
//	plant, err := fields["plant"].Mapping("a", "b", "c")   // one level down
//	a, err := plant["a"].Dense(-1, -1)   // errors read "loop.yaml:4: plant.a: …"
//
// Every method of [Field] returns a *[Error] that already carries the
// position and the key path; callers return it as it is, or wrap it with %w.

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"regexp"
	"strconv"
	"strings"
	"time"
	"unicode"
	"unicode/utf8"

	"gonum.org/v1/gonum/mat"
	"gopkg.in/yaml.v3"
)

// Error is an error at a position in a YAML file. Its message reads
// "file:line: key.path: what was wrong", lowercase, for example
//
//	wifi.yaml:12: controller_to_actuator.states[1].delay.sigma: want a number > 0, got "-1"
//
// Parts that are unknown are left out: no line when Line is 0, no key path
// when Key is "" (the document root), no file when File is "".
type Error struct {
	File string // the file as it should be shown, usually as given by the caller
	Line int    // 1-based line; 0 when unknown
	Key  string // key path from the document root, e.g. "plant.a" or "states[1].delay"
	Msg  string // what was wrong, a lowercase fragment
	Err  error  // the underlying error, if any (reachable with errors.Is/As)
}

func (e *Error) Error() string {
	var b strings.Builder
	switch {
	case e.File != "" && e.Line > 0:
		fmt.Fprintf(&b, "%s:%d: ", e.File, e.Line)
	case e.File != "":
		fmt.Fprintf(&b, "%s: ", e.File)
	case e.Line > 0:
		fmt.Fprintf(&b, "line %d: ", e.Line)
	}
	if e.Key != "" {
		b.WriteString(e.Key)
		b.WriteString(": ")
	}
	b.WriteString(e.Msg)
	return b.String()
}

// Unwrap returns the underlying error.
func (e *Error) Unwrap() error { return e.Err }

// Field is a YAML value together with where it sits: the file it came from
// and its key path from the document root. Aliases are resolved, so Node
// is never an alias node. A Field with a nil Node stands for a key that is
// absent; only IsZero and Errorf are meaningful on it.
type Field struct {
	File string     // file name for messages
	Path string     // key path from the root; "" for the root
	Node *yaml.Node // the value node
}

// Document parses data as one YAML document and returns its root value.
// Syntax errors come back positioned ("file:3: mapping values are not
// allowed in this context"); an empty document is an error, and so is a
// second document in the same data.
// Data larger than MaxYAMLBytes is refused, and so is data that holds
// more than MaxNodes values, counted before the parser builds anything
// (see yamlscan.go).
func Document(file string, data []byte) (Field, error) {
	if len(data) > MaxYAMLBytes {
		return Field{}, &Error{File: file, Msg: fmt.Sprintf("%d bytes, want at most %d (%s)", len(data), MaxYAMLBytes, byteSize(MaxYAMLBytes))}
	}
	if over, line := yamlValuesOver(data, MaxNodes); over {
		return Field{}, &Error{File: file, Line: line, Msg: fmt.Sprintf("want at most %d values, got more", MaxNodes)}
	}
	dec := yaml.NewDecoder(bytes.NewReader(data))
	var doc yaml.Node
	if err := dec.Decode(&doc); err != nil {
		if errors.Is(err, io.EOF) {
			return Field{}, &Error{File: file, Msg: "empty document"}
		}
		return Field{}, syntaxError(file, err)
	}
	var extra yaml.Node
	if err := dec.Decode(&extra); !errors.Is(err, io.EOF) {
		if err != nil {
			return Field{}, syntaxError(file, err)
		}
		line := extra.Line
		if len(extra.Content) > 0 {
			line = extra.Content[0].Line
		}
		return Field{}, &Error{File: file, Line: line, Msg: "want one YAML document, got more"}
	}
	root := NodeField(file, "", &doc)
	if err := root.CheckSize(MaxNodes); err != nil {
		return Field{}, err
	}
	return root, nil
}

// MaxNodes bounds the size of a document once its aliases are expanded
// (see Field.CheckSize).
const MaxNodes = 100_000

// TreeSize counts the values of n's tree with every alias expanded. The
// count stops, with ok false, once it passes limit or the tree is more
// than 1000 levels deep; a tree of a document Document returned is
// neither, so its count with limit math.MaxInt is exact.
func TreeSize(n *yaml.Node, limit int) (count int, ok bool) {
	var walk func(n *yaml.Node, depth int) bool
	walk = func(n *yaml.Node, depth int) bool {
		n = Resolve(n)
		if n == nil {
			return true
		}
		count++
		if count > limit || depth > 1000 {
			return false
		}
		for _, c := range n.Content {
			if !walk(c, depth+1) {
				return false
			}
		}
		return true
	}
	ok = walk(n, 0)
	return count, ok
}

// CheckSize returns an error when the field's tree, counted with every
// alias expanded, holds more than limit nodes: a small file whose aliases
// refer to aliases can stand for an enormous tree ("billion laughs"), and
// decoders that walk it would never finish. The walk stops at the limit.
func (f Field) CheckSize(limit int) error {
	if _, ok := TreeSize(f.Node, limit); !ok {
		return f.Errorf("want at most %d values with aliases expanded, got more", limit)
	}
	return nil
}

var yamlLine = regexp.MustCompile(`^yaml: line (\d+): (.*)$`)

// syntaxError turns a yaml.v3 parse error ("yaml: line 3: …") into an
// *Error with the line split out.
func syntaxError(file string, err error) error {
	msg := err.Error()
	if m := yamlLine.FindStringSubmatch(msg); m != nil {
		line, _ := strconv.Atoi(m[1])
		return &Error{File: file, Line: line, Msg: parserText(m[2]), Err: err}
	}
	return &Error{File: file, Msg: parserText(strings.TrimPrefix(msg, "yaml: ")), Err: err}
}

// parserText is a YAML parser's message made safe to print: a few of them
// quote the input (an anchor's name, say), so control characters and
// invalid UTF-8 are escaped and the text is cut at 160 characters.
func parserText(s string) string {
	var b strings.Builder
	n := 0
	for i, r := range s {
		if n == 160 {
			b.WriteString("…")
			break
		}
		n++
		switch {
		case r == utf8.RuneError && !utf8.FullRuneInString(s[i:]) || r == utf8.RuneError && s[i] != 0xef:
			fmt.Fprintf(&b, `\x%02x`, s[i])
		case unicode.IsControl(r):
			q := strconv.QuoteRune(r)
			b.WriteString(q[1 : len(q)-1])
		default:
			b.WriteRune(r)
		}
	}
	return b.String()
}

// NodeField wraps a node that the caller already holds (a value found in
// another file's tree, say) as a Field with the given file and key path. A
// document node is unwrapped to its content; aliases are resolved.
func NodeField(file, path string, n *yaml.Node) Field {
	return Field{File: file, Path: path, Node: Resolve(n)}
}

// Resolve returns the value n stands for: a document's content, an
// alias's target (aliases of aliases followed); nil for an empty document.
func Resolve(n *yaml.Node) *yaml.Node {
	for range 64 { // aliases of aliases; yaml.v3 rejects cycles already
		if n == nil {
			return nil
		}
		switch n.Kind {
		case yaml.DocumentNode:
			if len(n.Content) == 0 {
				return nil
			}
			n = n.Content[0]
		case yaml.AliasNode:
			n = n.Alias
		default:
			return n
		}
	}
	return n
}

// IsZero reports whether the field is absent (a key not given).
func (f Field) IsZero() bool { return f.Node == nil }

// IsNull reports whether the field is absent or an explicit YAML null
// ("key:" with nothing after it, "~", "null").
func (f Field) IsNull() bool {
	return f.Node == nil || (f.Node.Kind == yaml.ScalarNode && f.Node.Tag == "!!null")
}

// Line is the field's 1-based line, 0 when absent.
func (f Field) Line() int {
	if f.Node == nil {
		return 0
	}
	return f.Node.Line
}

// Errorf returns a positioned error at the field's line and key path.
func (f Field) Errorf(format string, args ...any) *Error {
	e := &Error{File: f.File, Line: f.Line(), Key: f.Path, Msg: fmt.Sprintf(format, args...)}
	for _, a := range args {
		if err, ok := a.(error); ok {
			e.Err = err
			break
		}
	}
	return e
}

// Key returns the key path of a child key: "a" under the root, "x.a" under
// "x".
func (f Field) Key(key string) string {
	if f.Path == "" {
		return key
	}
	return f.Path + "." + key
}

// Got describes the field's value for a "want …, got …" message: a
// scalar's text quoted, otherwise its kind ("a mapping", "a sequence",
// "null", "nothing").
func (f Field) Got() string {
	n := f.Node
	switch {
	case n == nil:
		return "nothing"
	case n.Kind == yaml.MappingNode:
		return "a mapping"
	case n.Kind == yaml.SequenceNode:
		return "a sequence"
	case n.Tag == "!!null":
		return "null"
	}
	v := n.Value
	if len(v) > 40 {
		v = v[:37] + "..."
	}
	return strconv.Quote(v)
}

// Mapping checks that the field is a mapping whose keys are all among
// allowed, each given once, and returns the values by key. An unknown key
// is reported at its own line with the mapping's path and the keys
// accepted there, in the order given:
//
//	pick.yaml:7: sensor_to_controller: unknown key "lossy" (want one of: loss, delay, states, trace)
//
// A null field (a key with nothing after it) counts as an empty mapping.
func (f Field) Mapping(allowed ...string) (map[string]Field, error) {
	if f.IsNull() {
		return map[string]Field{}, nil
	}
	if f.Node.Kind != yaml.MappingNode {
		if f.Path == "" && f.Node.Kind == yaml.ScalarNode {
			// A whole file that reads as one value is not a file of
			// ours at all (a list of hosts, a password file): say so
			// without repeating it.
			return nil, f.Errorf("want a mapping of keys, got a file that reads as a single value (%d characters)", len([]rune(f.Node.Value)))
		}
		return nil, f.Errorf("want a mapping, got %s", f.Got())
	}
	out := make(map[string]Field, len(f.Node.Content)/2)
	for i := 0; i+1 < len(f.Node.Content); i += 2 {
		k, v := Resolve(f.Node.Content[i]), f.Node.Content[i+1]
		if k == nil || k.Kind != yaml.ScalarNode {
			return nil, &Error{File: f.File, Line: f.Node.Content[i].Line, Key: f.Path, Msg: "want a plain key, got a mapping or sequence as key"}
		}
		name := k.Value
		if !contains(allowed, name) {
			return nil, &Error{File: f.File, Line: k.Line, Key: f.Path, Msg: UnknownKey(name, allowed)}
		}
		if _, dup := out[name]; dup {
			return nil, &Error{File: f.File, Line: k.Line, Key: f.Path, Msg: fmt.Sprintf("key %s given twice", Token(name))}
		}
		out[name] = NodeField(f.File, f.Key(name), v)
		if out[name].Node == nil {
			// An alias to nothing; keep the key's position.
			out[name] = Field{File: f.File, Path: f.Key(name), Node: &yaml.Node{Kind: yaml.ScalarNode, Tag: "!!null", Line: k.Line}}
		}
	}
	return out, nil
}

// UnknownKey is the message for a key that is not among allowed:
// `unknown key "num" (want one of: a, b, c)`. The key is quoted and
// escaped, at most 40 characters of it (Token); the accepted keys are
// listed in the order given.
func UnknownKey(name string, allowed []string) string {
	if len(allowed) == 0 {
		return fmt.Sprintf("unknown key %s (want no keys here)", Token(name))
	}
	return fmt.Sprintf("unknown key %s (want one of: %s)", Token(name), strings.Join(allowed, ", "))
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

// Seq checks that the field is a sequence and returns its items, with key
// paths "path[0]", "path[1]", …
func (f Field) Seq() ([]Field, error) {
	if f.Node == nil || f.Node.Kind != yaml.SequenceNode {
		return nil, f.Errorf("want a list, got %s", f.Got())
	}
	out := make([]Field, len(f.Node.Content))
	for i, n := range f.Node.Content {
		out[i] = NodeField(f.File, fmt.Sprintf("%s[%d]", f.Path, i), n)
		if out[i].Node == nil {
			out[i].Node = &yaml.Node{Kind: yaml.ScalarNode, Tag: "!!null", Line: n.Line}
		}
	}
	return out, nil
}

// Text returns a scalar's text. Numbers and booleans are accepted as
// their text ("name: 42" is the name "42"); null, mappings and sequences
// are not.
func (f Field) Text() (string, error) {
	if f.Node == nil || f.Node.Kind != yaml.ScalarNode || f.Node.Tag == "!!null" {
		return "", f.Errorf("want a string, got %s", f.Got())
	}
	return f.Node.Value, nil
}

// Float returns a finite number. YAML's int and float scalars are accepted,
// and so is a quoted string that parses as one ("1e-3"); .inf and .nan are
// not.
func (f Field) Float() (float64, error) {
	v, ok := f.AsFloat()
	if !ok {
		return 0, f.Errorf("want a number, got %s", f.Got())
	}
	return v, nil
}

func (f Field) AsFloat() (float64, bool) {
	n := f.Node
	if n == nil || n.Kind != yaml.ScalarNode || n.Tag == "!!null" || n.Tag == "!!bool" {
		return 0, false
	}
	var v float64
	if n.Tag == "!!int" || n.Tag == "!!float" {
		if err := n.Decode(&v); err != nil {
			return 0, false
		}
	} else {
		var err error
		v, err = strconv.ParseFloat(strings.TrimSpace(n.Value), 64)
		if err != nil {
			return 0, false
		}
	}
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, false
	}
	return v, true
}

// FloatIn returns a number in [lo, hi] (either end may be ±Inf), with a
// message that says so: `want a number in [0, 1], got "1.5"`.
func (f Field) FloatIn(lo, hi float64) (float64, error) {
	v, ok := f.AsFloat()
	if !ok || v < lo || v > hi {
		return 0, f.Errorf("want %s, got %s", describeRange("a number", lo, hi, false), f.Got())
	}
	return v, nil
}

// Positive returns a number > 0: `want a number > 0, got "-1"`.
func (f Field) Positive() (float64, error) {
	v, ok := f.AsFloat()
	if !ok || v <= 0 {
		return 0, f.Errorf("want a number > 0, got %s", f.Got())
	}
	return v, nil
}

func describeRange(what string, lo, hi float64, unit bool) string {
	format := func(x float64) string {
		if unit {
			return time.Duration(x * 1e9).String()
		}
		return strconv.FormatFloat(x, 'g', -1, 64)
	}
	switch {
	case math.IsInf(lo, -1) && math.IsInf(hi, 1):
		return what
	case math.IsInf(hi, 1):
		return what + " ≥ " + format(lo)
	case math.IsInf(lo, -1):
		return what + " ≤ " + format(hi)
	}
	return fmt.Sprintf("%s in [%s, %s]", what, format(lo), format(hi))
}

// Uint64 returns a non-negative integer (seeds, counts).
func (f Field) Uint64() (uint64, error) {
	n := f.Node
	if n != nil && n.Kind == yaml.ScalarNode && n.Tag == "!!int" {
		var v uint64
		if err := n.Decode(&v); err == nil {
			return v, nil
		}
	}
	return 0, f.Errorf("want a whole number ≥ 0, got %s", f.Got())
}

// Int returns an integer.
func (f Field) Int() (int, error) {
	n := f.Node
	if n != nil && n.Kind == yaml.ScalarNode && n.Tag == "!!int" {
		var v int
		if err := n.Decode(&v); err == nil {
			return v, nil
		}
	}
	return 0, f.Errorf("want a whole number, got %s", f.Got())
}

// Bool returns a YAML boolean (true/false).
func (f Field) Bool() (bool, error) {
	n := f.Node
	if n != nil && n.Kind == yaml.ScalarNode && n.Tag == "!!bool" {
		var v bool
		if err := n.Decode(&v); err == nil {
			return v, nil
		}
	}
	return false, f.Errorf("want true or false, got %s", f.Got())
}

// ParseDuration reads a duration in seconds from text: a Go duration
// string ("250us", "3ms", "1.5s"; time.ParseDuration) or a plain number of
// seconds ("0.003"). It accepts negative values; NaN and infinities are
// rejected.
func ParseDuration(s string) (float64, error) {
	s = strings.TrimSpace(s)
	if d, err := time.ParseDuration(s); err == nil {
		return d.Seconds(), nil
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, fmt.Errorf("want a duration (\"3ms\") or seconds, got %s", Token(s))
	}
	return v, nil
}

// Duration returns a duration in seconds: a Go duration string or a plain
// number of seconds (see [ParseDuration]). Negative values are accepted
// here; use DurationIn to bound them.
func (f Field) Duration() (float64, error) {
	n := f.Node
	if n != nil && n.Kind == yaml.ScalarNode && n.Tag != "!!null" && n.Tag != "!!bool" {
		if v, err := ParseDuration(n.Value); err == nil {
			return v, nil
		}
	}
	return 0, f.Errorf("want a duration (\"3ms\") or seconds, got %s", f.Got())
}

// DurationIn returns a duration in seconds within [lo, hi] (either end may
// be ±Inf): `want a duration ≥ 0s, got "-1ms"`.
func (f Field) DurationIn(lo, hi float64) (float64, error) {
	v, err := f.Duration()
	if err != nil || v < lo || v > hi {
		return 0, f.Errorf("want %s, got %s", describeRange("a duration", lo, hi, true), f.Got())
	}
	return v, nil
}

// PositiveDuration returns a duration > 0 in seconds.
func (f Field) PositiveDuration() (float64, error) {
	v, err := f.Duration()
	if err != nil || v <= 0 {
		return 0, f.Errorf("want a duration > 0, got %s", f.Got())
	}
	return v, nil
}

// PositiveDurationMax returns a duration in (0, hi] seconds:
// `want a duration > 0 and ≤ 1h0m0s, got "0"`.
func (f Field) PositiveDurationMax(hi float64) (float64, error) {
	v, err := f.Duration()
	if err != nil || v <= 0 || v > hi {
		return 0, f.Errorf("want a duration > 0 and ≤ %s, got %s", time.Duration(hi*1e9), f.Got())
	}
	return v, nil
}

// Vector returns a list of numbers: [0.5, 1]. A single number is not a
// vector (write [0.5]).
func (f Field) Vector() ([]float64, error) {
	items, err := f.Seq()
	if err != nil {
		return nil, f.Errorf("want a list of numbers, got %s", f.Got())
	}
	out := make([]float64, len(items))
	for i, it := range items {
		v, ok := it.AsFloat()
		if !ok {
			return nil, it.Errorf("want a number, got %s", it.Got())
		}
		out[i] = v
	}
	return out, nil
}

// Matrix returns a rectangular matrix given as a list of rows,
// [[0, 1], [0, -2]], with at least one row and one column. Ragged rows are
// an error at the offending row: `want 2 numbers in each row, got 3`.
func (f Field) Matrix() ([][]float64, error) {
	rows, err := f.Seq()
	if err != nil || len(rows) == 0 {
		return nil, f.Errorf("want a matrix (a list of rows, [[1, 0], [0, 1]]), got %s", f.Got())
	}
	out := make([][]float64, len(rows))
	for i, r := range rows {
		if r.Node.Kind != yaml.SequenceNode {
			return nil, r.Errorf("want a row (a list of numbers), got %s", r.Got())
		}
		v, err := r.Vector()
		if err != nil {
			return nil, err
		}
		if len(v) == 0 {
			return nil, r.Errorf("want a non-empty row")
		}
		if i > 0 && len(v) != len(out[0]) {
			return nil, r.Errorf("want %d numbers in each row, got %d", len(out[0]), len(v))
		}
		out[i] = v
	}
	return out, nil
}

// Dense returns the matrix as a *mat.Dense of the given shape; rows or
// cols < 0 accept any size. A wrong shape reads `want 1×1, got 1×2`.
func (f Field) Dense(rows, cols int) (*mat.Dense, error) {
	m, err := f.Matrix()
	if err != nil {
		return nil, err
	}
	r, c := len(m), len(m[0])
	if (rows >= 0 && r != rows) || (cols >= 0 && c != cols) {
		want := func(n int) string {
			if n < 0 {
				return "n"
			}
			return strconv.Itoa(n)
		}
		return nil, f.Errorf("want %s×%s, got %d×%d", want(rows), want(cols), r, c)
	}
	d := mat.NewDense(r, c, nil)
	for i, row := range m {
		d.SetRow(i, row)
	}
	return d, nil
}
