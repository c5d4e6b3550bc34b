package yamlpos

import "strings"

// A count of a YAML text's values made before it is parsed. The YAML
// parser builds the whole tree (about 150 bytes a value) before the tree's
// size can be checked, and the densest layouts hold a value every byte or
// two ("[0,0,0,…]", "{a,a,a,…}"); counting first lets a file that holds
// more than MaxNodes values be refused in one pass over its bytes, with
// nothing built.
//
// The count is a lower bound on the values the parser would build, so it
// never refuses a document the tree check would accept: it counts, outside
// quoted strings, comments and block scalars,
//
//   - each comma inside a flow collection (every comma follows an item,
//     and an item is at least one value),
//   - each ": " or ":" at a line's end (a key and its value: two values,
//     counted once), and
//   - each block sequence entry "- " (or complex key "? ") that starts a
//     line or follows another entry on it (at least one value).
//
// An item that is a pair is counted for its comma and its colon, and
// holds at least two values, so the bound holds for pairs too.

// yamlValuesOver reports whether data certainly holds more than limit
// values (see above), and the line where the count passed limit.
func yamlValuesOver(data []byte, limit int) (bool, int) {
	var (
		count      int
		line       = 1
		flow       int // depth of [ and {
		lineStart  = true
		indent     int          // indentation of the current line
		onlyDashes      = true  // the line so far holds only indentation and "- "
		prev       byte = '\n'  // previous significant byte on this line ('\n' at its start)
		block           = -1    // indentation a block scalar's lines must exceed; -1 when not in one
		pendBlock       = false // a block scalar header ("|" or ">") ends this line
	)
	space := func(c byte) bool { return c == ' ' || c == '\t' }
	at := func(i int) byte {
		if i < len(data) {
			return data[i]
		}
		return '\n'
	}
	i := 0
	for i < len(data) {
		if count > limit {
			return true, line
		}
		c := data[i]
		if lineStart {
			// Measure the indentation; inside a block scalar, skip the
			// line while it is indented past the scalar's parent (or
			// blank).
			j := i
			for j < len(data) && data[j] == ' ' {
				j++
			}
			indent = j - i
			if block >= 0 {
				if j >= len(data) || data[j] == '\n' || data[j] == '\r' || indent > block {
					for j < len(data) && data[j] != '\n' {
						j++
					}
					i = j + 1
					line++
					continue
				}
				block = -1
			}
			lineStart, onlyDashes, prev, pendBlock = false, true, '\n', false
			i = j
			continue
		}
		switch {
		case c == '\n':
			if pendBlock && flow == 0 {
				block = indent
			}
			line++
			lineStart = true
			i++
			continue
		case space(c) || c == '\r':
			i++
			continue
		case c == '#' && (prev == '\n' || space(at(i-1))):
			for i < len(data) && data[i] != '\n' {
				i++
			}
			continue
		case (c == '"' || c == '\'') && nodeStart(prev):
			// A quoted scalar: skip to its closing quote.
			j := i + 1
			for j < len(data) {
				if c == '"' && data[j] == '\\' {
					j += 2
					continue
				}
				if data[j] == '\n' {
					line++
				}
				if data[j] == c {
					if c == '\'' && at(j+1) == '\'' {
						j += 2
						continue
					}
					break
				}
				j++
			}
			i = j + 1
			prev, onlyDashes, pendBlock = 'x', false, false
			continue
		case (c == '[' || c == '{') && (flow > 0 || nodeStart(prev)):
			flow++
		case (c == ']' || c == '}') && flow > 0:
			flow--
		case c == ',' && flow > 0:
			count++
		case c == ':' && (space(at(i+1)) || at(i+1) == '\n' || at(i+1) == '\r' || (flow > 0 && strings.IndexByte(",]}", at(i+1)) >= 0)):
			count++
		case (c == '-' || c == '?') && onlyDashes && flow == 0 && (space(at(i+1)) || at(i+1) == '\n' || at(i+1) == '\r'):
			count++
			prev = '-'
			i++
			continue
		case (c == '|' || c == '>') && flow == 0 && nodeStart(prev):
			pendBlock = true
			prev = c
			i++
			// the header's indicators (+, -, a digit) may follow
			for i < len(data) && (data[i] == '+' || data[i] == '-' || ('0' <= data[i] && data[i] <= '9')) {
				i++
			}
			continue
		}
		pendBlock = false
		onlyDashes = false
		prev = c
		i++
	}
	return count > limit, line
}

// nodeStart reports whether a value may start after the significant byte
// prev on its line: at the line's start, or after an indicator.
func nodeStart(prev byte) bool {
	return prev == '\n' || strings.IndexByte("-:?[{,", prev) >= 0
}
