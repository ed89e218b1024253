package mesh

import (
	"bufio"
	"bytes"
	"errors"
	"io"
	"os"
	"strconv"
)

// errLineTooLong is returned by lineReader.next for a line beyond MaxLineBytes.
var errLineTooLong = errors.New("line too long")

// lineReader hands out text lines without their terminator ("\n" or "\r\n")
// and without allocating per line: the slice is valid until the next call.
type lineReader struct {
	br   *bufio.Reader
	line int   // number of the line last returned (1-based)
	off  int64 // bytes consumed
	long []byte
}

// next returns the next line, or io.EOF when nothing is left.
func (lr *lineReader) next() ([]byte, error) {
	b, err := lr.br.ReadSlice('\n')
	if err == bufio.ErrBufferFull {
		lr.long = append(lr.long[:0], b...)
		for err == bufio.ErrBufferFull {
			if len(lr.long) > MaxLineBytes {
				lr.line++
				return nil, errLineTooLong
			}
			b, err = lr.br.ReadSlice('\n')
			lr.long = append(lr.long, b...)
		}
		b = lr.long
	}
	lr.off += int64(len(b))
	if err != nil && err != io.EOF {
		return nil, err
	}
	if len(b) == 0 {
		return nil, io.EOF
	}
	if len(b) > MaxLineBytes {
		lr.line++
		return nil, errLineTooLong
	}
	lr.line++
	b = bytes.TrimSuffix(b, []byte{'\n'})
	b = bytes.TrimSuffix(b, []byte{'\r'})
	return b, nil
}

// tokens walks the whitespace-separated fields of a line without
// allocating.
type tokens struct{ b []byte }

func isSpace(c byte) bool { return c == ' ' || c == '\t' || c == '\r' || c == '\v' || c == '\f' }

// next returns the next field, or nil at the end of the line.
func (t *tokens) next() []byte {
	b := t.b
	i := 0
	for i < len(b) && isSpace(b[i]) {
		i++
	}
	j := i
	for j < len(b) && !isSpace(b[j]) {
		j++
	}
	t.b = b[j:]
	if i == j {
		return nil
	}
	return b[i:j]
}

// rest returns what is left of the line with surrounding space trimmed.
func (t *tokens) rest() []byte {
	return bytes.TrimFunc(t.b, func(r rune) bool { return r < 0x80 && isSpace(byte(r)) })
}

// parseInt parses a decimal integer (optional sign) without allocating.
func parseInt(b []byte) (int64, bool) {
	if len(b) == 0 || len(b) > 20 {
		return 0, false
	}
	neg := false
	switch b[0] {
	case '-':
		neg = true
		b = b[1:]
	case '+':
		b = b[1:]
	}
	if len(b) == 0 {
		return 0, false
	}
	var v uint64
	for _, c := range b {
		if c < '0' || c > '9' {
			return 0, false
		}
		d := uint64(c - '0')
		if v > (1<<63-1-d)/10 {
			return 0, false
		}
		v = v*10 + d
	}
	if neg {
		return -int64(v), true
	}
	return int64(v), true
}

// parseFloat parses a number. The string conversion does not escape, so
// the compiler keeps short tokens on the stack.
func parseFloat(b []byte, bits int) (float64, bool) {
	if len(b) == 0 {
		return 0, false
	}
	// Fast path for plain integers, common in ascii PLY and OBJ.
	if len(b) < 16 {
		if v, ok := parseInt(b); ok {
			return float64(v), true
		}
	}
	f, err := strconv.ParseFloat(string(b), bits)
	if err != nil {
		var ne *strconv.NumError
		if errors.As(err, &ne) && ne.Err == strconv.ErrRange {
			return f, true // +-Inf or 0: the caller's finiteness check names it
		}
		return 0, false
	}
	return f, true
}

// remainingSize reports how many bytes r will still deliver when r can tell
// (an in-memory reader or a regular file), else -1.
func remainingSize(r io.Reader) int64 {
	switch v := r.(type) {
	case interface{ Len() int }:
		return int64(v.Len())
	case *os.File:
		st, err := v.Stat()
		if err != nil || !st.Mode().IsRegular() {
			return -1
		}
		at, err := v.Seek(0, io.SeekCurrent)
		if err != nil {
			return -1
		}
		return st.Size() - at
	}
	return -1
}

// quote shows a token in an error message, escaping anything not printable
// and cutting it short.
func quote(b []byte) string {
	if len(b) > 40 {
		return strconv.Quote(string(b[:40])) + "..."
	}
	return strconv.Quote(string(b))
}
