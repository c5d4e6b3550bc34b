package yamlpos

// Opening the files the project reads. Every input file — a profile, a
// loop, a scenario, a links file, a lab topology, an empirical delay's
// samples, a probe trace — goes through OpenInputFile or ReadInputFile,
// which accept only a regular file (after following symbolic links) no
// larger than the cap of its kind, checked before a byte is read. A named
// pipe is never opened for reading in a way that could block: the path is
// checked with stat first, then opened with O_NONBLOCK and checked again
// on the open descriptor, so a file swapped for a pipe in between is
// refused too.

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"strconv"
	"strings"
	"syscall"
)

// Caps on the size of input files, in bytes, checked before reading.
const (
	// MaxYAMLBytes caps a YAML file: profile, loop, scenario, links file,
	// lab topology (1 MiB). The largest tree a YAML file may hold is
	// MaxNodes values; a megabyte holds that many comfortably in any
	// layout a person writes, and it keeps what the YAML parser builds
	// before that count is checked to tens of megabytes.
	MaxYAMLBytes = 1 << 20
	// MaxSamplesBytes caps an empirical delay's samples file (16 MiB):
	// MaxSamples delays of a line each, with room for comments.
	MaxSamplesBytes = 16 << 20
	// MaxTraceBytes caps a probe trace (1 GiB): the longest run `impair
	// probe` makes (MaxTraceProbes probes) writes lines of about 80
	// bytes, so every trace it writes fits.
	MaxTraceBytes = 1 << 30
)

// FileError is an input file that could not be used as one: it does not
// exist or cannot be opened (Err holds the system's error), it is not a
// regular file, or it is larger than its cap. Its message names what the
// file is for and its path:
//
//	reading profile: open x.yaml: no such file or directory
//	profile x.yaml: not a regular file (a named pipe)
//	profile x.yaml: 52428800 bytes, want at most 1048576 (1 MiB)
type FileError struct {
	What string // what the file is for: "profile", "loop file", "trace", …
	Path string
	Msg  string // what is wrong with it; "" when Err says it
	Err  error
}

func (e *FileError) Error() string {
	if e.Msg == "" {
		return fmt.Sprintf("reading %s: %v", e.What, e.Err)
	}
	return fmt.Sprintf("%s %s: %s", e.What, e.Path, e.Msg)
}

// Unwrap returns the system's error, if any.
func (e *FileError) Unwrap() error { return e.Err }

// Reason is the error without what and path: "no such file or
// directory", "not a regular file (a named pipe)".
func (e *FileError) Reason() string {
	if e.Msg != "" {
		return e.Msg
	}
	var pe *fs.PathError
	if errors.As(e.Err, &pe) {
		return pe.Err.Error()
	}
	return e.Err.Error()
}

// OpenInputFile opens path for reading when it is a regular file of at
// most limit bytes, and returns it with its size. what says what the file
// is for, in messages ("profile", "trace"). Errors are *FileError.
func OpenInputFile(path, what string, limit int64) (*os.File, int64, error) {
	st, err := os.Stat(path)
	if err != nil {
		return nil, 0, &FileError{What: what, Path: path, Err: asOpenError(path, err)}
	}
	if err := checkInput(path, what, st, limit); err != nil {
		return nil, 0, err
	}
	// O_NONBLOCK: should the path have become a named pipe since the
	// stat, opening it returns at once instead of waiting for a writer.
	f, err := os.OpenFile(path, os.O_RDONLY|syscall.O_NONBLOCK, 0)
	if err != nil {
		return nil, 0, &FileError{What: what, Path: path, Err: err}
	}
	st2, err := f.Stat()
	if err != nil {
		f.Close()
		return nil, 0, &FileError{What: what, Path: path, Err: err}
	}
	if err := checkInput(path, what, st2, limit); err != nil {
		f.Close()
		return nil, 0, err
	}
	return f, st2.Size(), nil
}

// ReadInputFile reads the whole of path when it is a regular file of at
// most limit bytes (see OpenInputFile). A file that grows past limit
// while it is read is refused too.
func ReadInputFile(path, what string, limit int64) ([]byte, error) {
	f, size, err := OpenInputFile(path, what, limit)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	var b bytes.Buffer
	b.Grow(int(size) + bytes.MinRead)
	if _, err := b.ReadFrom(io.LimitReader(f, limit+1)); err != nil {
		return nil, &FileError{What: what, Path: path, Err: err}
	}
	if int64(b.Len()) > limit {
		return nil, tooLarge(path, what, int64(b.Len()), limit, true)
	}
	return b.Bytes(), nil
}

// LimitedReader returns a reader of f that fails once more than limit
// bytes have been read (a file that grows while it is read).
func LimitedReader(f io.Reader, path, what string, limit int64) io.Reader {
	return &capReader{r: f, left: limit, path: path, what: what, limit: limit}
}

type capReader struct {
	r           io.Reader
	left, limit int64
	path, what  string
}

func (c *capReader) Read(p []byte) (int, error) {
	if c.left < 0 {
		return 0, tooLarge(c.path, c.what, c.limit+1, c.limit, true)
	}
	if int64(len(p)) > c.left+1 {
		p = p[:c.left+1]
	}
	n, err := c.r.Read(p)
	c.left -= int64(n)
	if c.left < 0 {
		return n, tooLarge(c.path, c.what, c.limit+1, c.limit, true)
	}
	return n, err
}

func asOpenError(path string, err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return &fs.PathError{Op: "open", Path: path, Err: pe.Err}
	}
	return err
}

func checkInput(path, what string, st fs.FileInfo, limit int64) error {
	if !st.Mode().IsRegular() {
		return &FileError{What: what, Path: path, Msg: "not a regular file (" + fileKind(st.Mode()) + ")"}
	}
	if st.Size() > limit {
		return tooLarge(path, what, st.Size(), limit, false)
	}
	return nil
}

func tooLarge(path, what string, size, limit int64, grew bool) error {
	got := strconv.FormatInt(size, 10) + " bytes"
	if grew {
		got = "more than " + strconv.FormatInt(limit, 10) + " bytes (it grew while read)"
	}
	return &FileError{What: what, Path: path, Msg: fmt.Sprintf("%s, want at most %d (%s)", got, limit, byteSize(limit))}
}

// byteSize spells a power-of-two size: "1 MiB".
func byteSize(n int64) string {
	switch {
	case n >= 1<<30 && n%(1<<30) == 0:
		return strconv.FormatInt(n>>30, 10) + " GiB"
	case n >= 1<<20 && n%(1<<20) == 0:
		return strconv.FormatInt(n>>20, 10) + " MiB"
	case n >= 1<<10 && n%(1<<10) == 0:
		return strconv.FormatInt(n>>10, 10) + " KiB"
	}
	return strconv.FormatInt(n, 10) + " B"
}

// fileKind names what a non-regular file is.
func fileKind(m fs.FileMode) string {
	switch {
	case m.IsDir():
		return "a directory"
	case m&fs.ModeNamedPipe != 0:
		return "a named pipe"
	case m&fs.ModeSocket != 0:
		return "a socket"
	case m&fs.ModeCharDevice != 0:
		return "a character device"
	case m&fs.ModeDevice != 0:
		return "a block device"
	case m&fs.ModeSymlink != 0:
		return "a symbolic link"
	}
	return "not a plain file: " + m.Type().String()
}

// maxToken is the most characters of input text a message quotes.
const maxToken = 40

// Token quotes a piece of input text for a message: at most 40
// characters, cut at a character boundary with "…" after, and quoted with
// strconv.Quote so that control characters and invalid UTF-8 come out as
// escapes, never as raw bytes. A message shows no more of a file than
// this.
func Token(s string) string {
	cut := false
	n := 0
	for i := range s {
		if n == maxToken {
			s, cut = s[:i], true
			break
		}
		n++
	}
	q := strconv.Quote(s)
	if cut {
		q += "…"
	}
	return q
}

// ShownNumber is a field of a line-based file (a samples file, a trace)
// that should have been a number, as a message shows it: quoted when it
// looks like a mistyped value (at most 24 letters, digits, points and
// signs), else only said to be something else, so that a message never
// repeats a line of a file that is not a delay list at all (no line of a
// password or configuration file passes).
func ShownNumber(s string) string {
	return shown(s, "text that is not a number", func(r rune) bool {
		return r == '.' || r == '+' || r == '-' || r == '_' || r == 'µ' || r == 'μ' || isWordRune(r)
	})
}

// ShownWord is like ShownNumber for a field that should have been a word
// (a column name, a status): quoted when it is a short word of letters,
// digits and underscores.
func ShownWord(s string) string {
	return shown(s, "text that is not one", func(r rune) bool { return r == '_' || isWordRune(r) })
}

// shown quotes s when it is at most 24 bytes of runes that fit; else it
// is other.
func shown(s, other string, fits func(rune) bool) string {
	if s == "" {
		return "nothing"
	}
	if len(s) <= 24 && !strings.ContainsFunc(s, func(r rune) bool { return !fits(r) }) {
		return Token(s)
	}
	return other
}

// isWordRune is an ASCII letter or digit.
func isWordRune(r rune) bool {
	return ('0' <= r && r <= '9') || ('a' <= r && r <= 'z') || ('A' <= r && r <= 'Z')
}
