package links

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"rigwire/emulate"
)

// recordFile is a link's record file (--record, or record: in a links
// file). It is written to a hidden file beside its path, which takes the
// path's place only once every link's sockets and the metrics endpoint are
// up (commit): a start that fails leaves an earlier record as it was.
//
// The path may not name one of the run's input files, nor an existing file
// that is not a record (its first line does not begin with the record magic): a
// record never overwrites a profile, a trace or anything else by mistake.
type recordFile struct {
	path string
	tmp  *os.File
}

// openRecord checks path against the inputs and opens the hidden file.
func openRecord(path string, inputs []string) (*recordFile, error) {
	if err := checkRecordPath(path, inputs); err != nil {
		return nil, err
	}
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	tmp, err := os.CreateTemp(dir, "."+base+".*.partial")
	if err != nil {
		return nil, fmt.Errorf("record %s: %w", path, err)
	}
	return &recordFile{path: path, tmp: tmp}, nil
}

// checkRecordPath refuses a record path that names an input of the run or
// an existing file that is not a record.
func checkRecordPath(path string, inputs []string) error {
	for _, in := range inputs {
		if in != "" && samePath(path, in) {
			return fmt.Errorf("record %s: that is an input of the run (%s); choose another path", path, in)
		}
	}
	fi, err := os.Stat(path)
	switch {
	case errors.Is(err, os.ErrNotExist):
		return nil
	case err != nil:
		return fmt.Errorf("record %s: %w", path, err)
	case !fi.Mode().IsRegular():
		return fmt.Errorf("record %s: exists and is not a regular file", path)
	case fi.Size() == 0:
		return nil
	}
	f, err := os.Open(path)
	if err != nil {
		return fmt.Errorf("record %s: %w", path, err)
	}
	defer f.Close()
	first, _ := bufio.NewReader(io.LimitReader(f, 256)).ReadString('\n')
	// Any version of the relay's record is the relay's own.
	if !strings.HasPrefix(first, emulate.RecordMagic) {
		return fmt.Errorf("record %s: exists and is not a relay record (its first line does not begin %q); the relay overwrites only its own records: remove it or choose another path", path, emulate.RecordMagic)
	}
	return nil
}

// samePath reports whether a and b name the same file: the same cleaned
// absolute path, or, when both exist, the same file (links, bind mounts).
func samePath(a, b string) bool {
	aa, err1 := filepath.Abs(a)
	bb, err2 := filepath.Abs(b)
	if err1 == nil && err2 == nil && aa == bb {
		return true
	}
	fa, err1 := os.Stat(a)
	fb, err2 := os.Stat(b)
	return err1 == nil && err2 == nil && os.SameFile(fa, fb)
}

// Write writes to the hidden file (and, after commit, to the record).
func (r *recordFile) Write(p []byte) (int, error) { return r.tmp.Write(p) }

// commit puts the record in its path's place.
func (r *recordFile) commit() error {
	if err := os.Rename(r.tmp.Name(), r.path); err != nil {
		return fmt.Errorf("record %s: %w", r.path, err)
	}
	return nil
}

// abandon removes the hidden file of a run that did not start.
func (r *recordFile) abandon() {
	r.tmp.Close()
	os.Remove(r.tmp.Name())
}

// Close closes the record.
func (r *recordFile) Close() error { return r.tmp.Close() }
