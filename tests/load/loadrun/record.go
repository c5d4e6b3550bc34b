package main

import (
	"bufio"
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"
)

// recordSummary is what the load script takes from a relay record file.
type recordSummary struct {
	Rows      int            // data rows
	Decisions map[string]int // rows per decision
	Lateness  []float64      // release_s − due_s of forwarded rows, seconds
}

// recordWant are the columns the load script needs from the relay's
// --record CSV: lines starting with '#' are comments; the first other line
// is the header; release_s is empty unless the datagram was forwarded.
var recordWant = []string{"decision", "due_s", "release_s"}

func readRecord(path string) (recordSummary, error) {
	f, err := os.Open(path)
	if err != nil {
		return recordSummary{}, err
	}
	defer f.Close()
	return parseRecord(f, path)
}

// parseRecord reads a record file; errors name the file, the line and the
// column.
func parseRecord(r io.Reader, name string) (recordSummary, error) {
	s := recordSummary{Decisions: map[string]int{}}
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 0, 4096), 1<<20)
	line := 0
	var col map[string]int
	var ncol int
	for sc.Scan() {
		line++
		text := strings.TrimRight(sc.Text(), "\r")
		if text == "" || strings.HasPrefix(text, "#") {
			continue
		}
		fields := strings.Split(text, ",")
		if col == nil {
			col = map[string]int{}
			for i, h := range fields {
				col[strings.TrimSpace(h)] = i
			}
			for _, w := range recordWant {
				if _, ok := col[w]; !ok {
					return s, fmt.Errorf("%s:%d: header: want a column %q, got %q", name, line, w, text)
				}
			}
			ncol = len(fields)
			continue
		}
		if len(fields) != ncol {
			return s, fmt.Errorf("%s:%d: want %d fields as in the header, got %d", name, line, ncol, len(fields))
		}
		s.Rows++
		d := fields[col["decision"]]
		s.Decisions[d]++
		if d != "forwarded" {
			continue
		}
		due, err := strconv.ParseFloat(fields[col["due_s"]], 64)
		if err != nil {
			return s, fmt.Errorf("%s:%d: due_s: want seconds, got %q", name, line, fields[col["due_s"]])
		}
		rel, err := strconv.ParseFloat(fields[col["release_s"]], 64)
		if err != nil {
			return s, fmt.Errorf("%s:%d: release_s: want seconds for a forwarded datagram, got %q", name, line, fields[col["release_s"]])
		}
		s.Lateness = append(s.Lateness, rel-due)
	}
	if err := sc.Err(); err != nil {
		return s, fmt.Errorf("%s:%d: %w", name, line, err)
	}
	if col == nil {
		return s, fmt.Errorf("%s: no header line", name)
	}
	return s, nil
}
