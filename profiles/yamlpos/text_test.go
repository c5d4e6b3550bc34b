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

// A field of a line-based file is quoted in a message only when it looks
// like a mistyped number or word.
func TestShownNumberAndWord(t *testing.T) {
	cases := []struct {
		name string
		f    func(string) string
		in   string
		want string
	}{
		{"number empty", ShownNumber, "", "nothing"},
		{"number mistyped", ShownNumber, "1.2.3ms", `"1.2.3ms"`},
		{"number with micro sign", ShownNumber, "850µs", `"850µs"`},
		{"number signed exponent", ShownNumber, "-1e+3", `"-1e+3"`},
		{"number with a space", ShownNumber, "1 ms", "text that is not a number"},
		{"number too long", ShownNumber, strings.Repeat("9", 25), "text that is not a number"},
		{"number at 24 bytes", ShownNumber, strings.Repeat("9", 24), `"` + strings.Repeat("9", 24) + `"`},
		{"number a config line", ShownNumber, "password=hunter2", "text that is not a number"},
		{"number invalid UTF-8", ShownNumber, "1\xff", "text that is not a number"},
		{"word empty", ShownWord, "", "nothing"},
		{"word", ShownWord, "one_way_s", `"one_way_s"`},
		{"word with a point", ShownWord, "1.5", "text that is not one"},
		{"word with a sign", ShownWord, "-x", "text that is not one"},
		{"word too long", ShownWord, strings.Repeat("a", 25), "text that is not one"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := c.f(c.in); got != c.want {
				t.Errorf("got %s, want %s", got, c.want)
			}
		})
	}
}
