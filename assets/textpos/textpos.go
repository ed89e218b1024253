// Package textpos converts byte offsets in a text file to the line and
// column a user sees in an editor, for error messages of the readers of
// text formats (the capture and materials JSON files).
package textpos

import "unicode/utf8"

// Lines indexes the line starts of a text, so that many offsets can be
// converted cheaply.
type Lines struct {
	data   []byte
	starts []int
}

// NewLines indexes data; it keeps data (not a copy).
func NewLines(data []byte) *Lines {
	li := &Lines{data: data, starts: []int{0}}
	for i, c := range data {
		if c == '\n' {
			li.starts = append(li.starts, i+1)
		}
	}
	return li
}

// Pos returns the 1-based line and column of byte offset off. Columns
// count characters (UTF-8 code points), not bytes, as editors do. An
// offset beyond the text is clamped to its end (where a truncated file's
// error is), a negative one to its start. A nil *Lines gives 0, 0 (no
// position known).
func (li *Lines) Pos(off int) (line, col int) {
	if li == nil {
		return 0, 0
	}
	off = min(max(off, 0), len(li.data))
	// The last line start at or before off.
	lo, hi := 0, len(li.starts)-1
	for lo < hi {
		m := (lo + hi + 1) / 2
		if li.starts[m] <= off {
			lo = m
		} else {
			hi = m - 1
		}
	}
	return lo + 1, utf8.RuneCount(li.data[li.starts[lo]:off]) + 1
}

// Pos returns the 1-based line and column of byte offset off in data, as
// (*Lines).Pos does, for a single conversion.
func Pos(data []byte, off int) (line, col int) {
	return NewLines(data).Pos(off)
}
