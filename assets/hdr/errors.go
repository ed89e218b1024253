package hdr

import (
	"fmt"
	"strings"
)

// FormatError reports malformed input and names the place: the header line,
// the scanline and the byte offset, whichever apply.
type FormatError struct {
	Format   string // "RGBE" or "PFM"
	Line     int    // header line, counted from 1; 0 when not in the header
	Scanline int    // image row counted from the top (0-based); -1 when not in the pixel data
	Offset   int64  // byte offset from the start of the input; -1 when unknown
	Msg      string // what is wrong and what was expected
}

func (e *FormatError) Error() string {
	return "hdr: invalid " + e.Format + ": " + place(e.Line, e.Scanline, e.Offset) + e.Msg
}

// UnsupportedError reports input that may be valid but that Patina does not
// read: another pixel format or orientation, or an image beyond MaxPixels.
type UnsupportedError struct {
	Format string // "RGBE" or "PFM"
	Line   int    // header line, counted from 1; 0 when not in the header
	Msg    string
}

func (e *UnsupportedError) Error() string {
	return "hdr: unsupported " + e.Format + ": " + place(e.Line, -1, -1) + e.Msg
}

func place(line, scanline int, off int64) string {
	var parts []string
	if line > 0 {
		parts = append(parts, fmt.Sprintf("header line %d", line))
	}
	if scanline >= 0 {
		parts = append(parts, fmt.Sprintf("scanline %d", scanline))
	}
	if off >= 0 {
		parts = append(parts, fmt.Sprintf("byte %d", off))
	}
	if len(parts) == 0 {
		return ""
	}
	return strings.Join(parts, ", ") + ": "
}

// checkSize refuses dimensions that are not positive or exceed MaxPixels
// (or the caller's lower limit), before any pixel memory exists.
func checkSize(format string, line int, off int64, w, h, limit int) error {
	if w <= 0 || h <= 0 {
		return &FormatError{format, line, -1, off, fmt.Sprintf("image size %dx%d, expected a width and height of at least 1", w, h)}
	}
	if int64(w)*int64(h) > int64(limit) {
		return &UnsupportedError{format, line, fmt.Sprintf("image size %dx%d (%d pixels) exceeds the limit of %d pixels (hdr.MaxPixels)",
			w, h, int64(w)*int64(h), limit)}
	}
	return nil
}
