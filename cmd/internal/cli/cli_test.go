package cli

import (
	"context"
	"errors"
	"io"
	"log/slog"
	"strings"
	"testing"
	"time"

	"rigwire/cmd/internal/exitcode"
)

// CheckMetricsAddr: "off" and HOST:PORT with a host pass; an empty value
// (an unset variable in an env file) and an address without a host (which
// would bind every interface) are bad usage that says how to turn metrics
// off; every interface is there only when asked for by address.
func TestCheckMetricsAddr(t *testing.T) {
	cases := []struct {
		name, addr string
		want       string // "" when accepted; else a part of the message
	}{
		{"off", "off", ""},
		{"loopback", "127.0.0.1:9471", ""},
		{"ephemeral port", "127.0.0.1:0", ""},
		{"host name", "localhost:9471", ""},
		{"IPv6 loopback", "[::1]:9471", ""},
		{"every IPv4 interface, explicit", "0.0.0.0:9471", ""},
		{"every interface, explicit", "[::]:9471", ""},
		{"empty", "", `--metrics: empty; want HOST:PORT (such as 127.0.0.1:9471), or "off" for no metrics endpoint`},
		{"blanks", "  ", `"off" for no metrics endpoint`},
		{"no host", ":9471", `--metrics: ":9471" has no host; give one (127.0.0.1 for this machine only, 0.0.0.0 or [::] for every interface), or "off" for no metrics endpoint`},
		{"no host, ephemeral port", ":0", `has no host`},
		{"no port", "127.0.0.1", `want HOST:PORT or "off", got "127.0.0.1"`},
		{"port out of range", "127.0.0.1:70000", `want HOST:PORT or "off"`},
		{"port a name", "127.0.0.1:http", `want HOST:PORT or "off"`},
		{"Off in capitals", "OFF", `want HOST:PORT or "off"`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			err := CheckMetricsAddr(c.addr)
			if c.want == "" {
				if err != nil {
					t.Fatalf("refused: %v", err)
				}
				return
			}
			var ue UsageError
			if !errors.As(err, &ue) {
				t.Fatalf("err %v, want a usage error", err)
			}
			if !strings.Contains(err.Error(), c.want) {
				t.Errorf("message %q lacks %q", err.Error(), c.want)
			}
			if code := Status(err, "x", &strings.Builder{}, &strings.Builder{}); code != exitcode.BadInput {
				t.Errorf("status %d, want %d (bad usage)", code, exitcode.BadInput)
			}
		})
	}
}

// TestParseSaysWhatAFlagTakes: a value the flag package refuses for one of
// its own kinds with "parse error" alone is bad usage that says what the
// flag takes; the messages of other refusals pass unchanged.
func TestParseSaysWhatAFlagTakes(t *testing.T) {
	newFlags := func() *Flags {
		f := NewFlags("x", "usage: x\n", "")
		f.Duration("wait", time.Second, "how long to wait")
		f.Int("count", 1, "how many")
		f.Uint64("seed", 0, "seed")
		f.Float64("rate", 1, "per second")
		f.Bool("strict", false, "strict")
		f.String("name", "", "a name")
		var a AddrFlag
		f.Var(&a, "listen", "`HOST:PORT`")
		return f
	}
	cases := []struct {
		name string
		args []string
		want string
	}{
		{"duration", []string{"--wait", "soon"}, `invalid value "soon" for flag -wait: want a duration such as "500ms", "2s" or "1m30s"`},
		{"duration, plain seconds", []string{"-wait=10"}, `invalid value "10" for flag -wait: want a duration such as "500ms", "2s" or "1m30s"`},
		{"whole number", []string{"--count", "2.5"}, `invalid value "2.5" for flag -count: want a whole number`},
		{"whole number ≥ 0", []string{"--seed", "-1"}, `invalid value "-1" for flag -seed: want a whole number ≥ 0`},
		{"number", []string{"--rate", "fast"}, `invalid value "fast" for flag -rate: want a number`},
		{"boolean", []string{"--strict=maybe"}, `invalid boolean value "maybe" for -strict: want true or false`},
		{"out of range, as the flag package says", []string{"--count", "99999999999999999999"}, `invalid value "99999999999999999999" for flag -count: value out of range`},
		{"a flag's own message", []string{"--listen", "x"}, `invalid value "x" for flag -listen: want HOST:PORT, got "x"`},
		{"unknown flag", []string{"--nope"}, "flag provided but not defined: -nope"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			err := newFlags().Parse(c.args)
			var ue UsageError
			if !errors.As(err, &ue) || err.Error() != c.want {
				t.Errorf("got  %v\nwant a usage error %s", err, c.want)
			}
		})
	}
}

// TestLogLevel: --log-level sets the logger's level; a word other than
// debug, info, warn or error is bad usage naming the flag.
func TestLogLevel(t *testing.T) {
	cases := []struct {
		name, arg string
		enabled   slog.Level // the lowest level the logger writes
		err       string
	}{
		{"default", "", slog.LevelInfo, ""},
		{"debug", "debug", slog.LevelDebug, ""},
		{"warn", "warn", slog.LevelWarn, ""},
		{"unknown", "loud", 0, `--log-level: want debug, info, warn or error, got "loud"`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			f := NewFlags("x", "usage: x\n", "")
			logger := f.LogLevel()
			var args []string
			if c.arg != "" {
				args = []string{"--log-level", c.arg}
			}
			if err := f.Parse(args); err != nil {
				t.Fatal(err)
			}
			log, err := logger(io.Discard)
			if c.err != "" {
				var ue UsageError
				if !errors.As(err, &ue) || err.Error() != c.err {
					t.Fatalf("got %v, want a usage error %s", err, c.err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			ctx := context.Background()
			if !log.Enabled(ctx, c.enabled) || log.Enabled(ctx, c.enabled-1) {
				t.Errorf("logger writes from another level than %s", c.enabled)
			}
		})
	}
}
