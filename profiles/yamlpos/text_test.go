package yamlpos

import (
	"strings"
	"testing"
)

func TestToken(t *testing.T) {
	cases := []struct{ name, in, want string }{
		{"short", "abc", `"abc"`},
		{"control characters", "a\x00b\x1b", `"a\x00b\x1b"`},
		{"invalid UTF-8", "\xff\xfe", `"\xff\xfe"`},
		{"long", strings.Repeat("é", 50), `"` + strings.Repeat("é", 40) + `"…`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := Token(c.in); got != c.want {
				t.Errorf("got %s, want %s", got, c.want)
			}
		})
	}
}

func TestParserText(t *testing.T) {
	cases := []struct{ name, in, want string }{
		{"plain", "unknown anchor 'y' referenced", "unknown anchor 'y' referenced"},
		{"control characters", "a\x01b\n", `a\x01b\n`},
		{"invalid UTF-8", "b\xffc", `b\xffc`},
		{"replacement character kept", "a\uFFFDé", "a\uFFFDé"},
		{"long", strings.Repeat("x", 200), strings.Repeat("x", 160) + "…"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := parserText(c.in); got != c.want {
				t.Errorf("got %q, want %q", got, c.want)
			}
		})
	}
}
