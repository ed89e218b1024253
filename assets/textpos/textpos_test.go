package textpos

import (
	"encoding/json"
	"errors"
	"testing"
)

// TestPos checks line and column against hand-counted positions, with a
// multi-byte character before the offset (columns count characters, as
// common practice in editors and in the Go compiler's own error messages;
// go/token counts bytes, which is why this is stated).
func TestPos(t *testing.T) {
	data := []byte("ab\n\"é\": 1,\n\nx")
	cases := []struct{ off, line, col int }{
		{0, 1, 1},
		{2, 1, 3},  // the first newline itself ends line 1
		{3, 2, 1},  // just after it
		{6, 2, 3},  // after `"é` (é is two bytes)
		{12, 3, 1}, // the empty line
		{13, 4, 1}, // "x"
		{14, 4, 2}, // end of the text
		{99, 4, 2}, // clamped
		{-5, 1, 1}, // clamped
	}
	li := NewLines(data)
	for _, c := range cases {
		if l, col := li.Pos(c.off); l != c.line || col != c.col {
			t.Errorf("Pos(%d) = %d:%d, want %d:%d", c.off, l, col, c.line, c.col)
		}
		if l, col := Pos(data, c.off); l != c.line || col != c.col {
			t.Errorf("package Pos(%d) = %d:%d, want %d:%d", c.off, l, col, c.line, c.col)
		}
	}
	var none *Lines
	if l, c := none.Pos(3); l != 0 || c != 0 {
		t.Errorf("nil Lines: %d:%d", l, c)
	}
}

// TestPosOfJSONSyntaxError checks the conversion of encoding/json's
// SyntaxError.Offset (the byte count read when the error occurred,
// encoding/json documentation) on a file with an error on line 3.
func TestPosOfJSONSyntaxError(t *testing.T) {
	data := []byte("{\n \"a\": 1,\n \"b\": ]\n}")
	var v any
	err := json.Unmarshal(data, &v)
	var se *json.SyntaxError
	if !errors.As(err, &se) {
		t.Fatalf("expected a syntax error, got %v", err)
	}
	// The offending "]" is at line 3, column 7; Offset counts it as read.
	if l, c := Pos(data, int(se.Offset)-1); l != 3 || c != 7 {
		t.Fatalf("syntax error at %d:%d, want 3:7", l, c)
	}
}
