package hdr

import (
	"errors"
	"io"
	"os"
)

// byteReader buffers an io.Reader and keeps the stream offset, so errors can
// name the byte where a problem was found. It reads no further ahead than its
// buffer.
type byteReader struct {
	r        io.Reader
	buf      []byte
	pos, end int
	base     int64 // stream offset of buf[0]
	err      error // first error from r; io.EOF at the end
}

const readBufSize = 64 << 10

func newByteReader(r io.Reader) *byteReader {
	return &byteReader{r: r, buf: make([]byte, readBufSize)}
}

// offset returns the stream offset of the next unread byte.
func (b *byteReader) offset() int64 { return b.base + int64(b.pos) }

// fill moves the unread bytes to the front and reads more. It reports
// whether any new byte arrived.
func (b *byteReader) fill() bool {
	if b.err != nil {
		return false
	}
	if b.pos > 0 {
		n := copy(b.buf, b.buf[b.pos:b.end])
		b.base += int64(b.pos)
		b.pos, b.end = 0, n
	}
	for tries := 0; b.end < len(b.buf); tries++ {
		n, err := b.r.Read(b.buf[b.end:])
		b.end += n
		if err != nil {
			b.err = err
			return n > 0
		}
		if n > 0 {
			return true
		}
		if tries > 100 {
			b.err = io.ErrNoProgress
			return false
		}
	}
	return true
}

// ioErr returns the reader's error other than the end of input, or nil.
func (b *byteReader) ioErr() error {
	if b.err == nil || errors.Is(b.err, io.EOF) || errors.Is(b.err, io.ErrUnexpectedEOF) {
		return nil
	}
	return b.err
}

// readByte returns the next byte; ok is false at the end of input.
func (b *byteReader) readByte() (c byte, ok bool) {
	if b.pos < b.end {
		c = b.buf[b.pos]
		b.pos++
		return c, true
	}
	return b.readByteSlow()
}

func (b *byteReader) readByteSlow() (byte, bool) {
	for b.pos >= b.end {
		if !b.fill() {
			return 0, false
		}
	}
	c := b.buf[b.pos]
	b.pos++
	return c, true
}

// peekByte returns the next byte without consuming it.
func (b *byteReader) peekByte() (byte, bool) {
	for b.pos >= b.end {
		if !b.fill() {
			return 0, false
		}
	}
	return b.buf[b.pos], true
}

// need makes at least n bytes (n <= readBufSize) available in
// b.buf[b.pos:b.end]; it reports false when the input ends first.
func (b *byteReader) need(n int) bool {
	for b.end-b.pos < n {
		if !b.fill() {
			return false
		}
	}
	return true
}

// readFull fills dst and returns how many bytes it copied before the input
// ended.
func (b *byteReader) readFull(dst []byte) int {
	n := 0
	for n < len(dst) {
		if b.pos >= b.end && !b.fill() {
			return n
		}
		k := copy(dst[n:], b.buf[b.pos:b.end])
		b.pos += k
		n += k
	}
	return n
}

// remaining estimates how many unread bytes the input still holds when the
// underlying reader can tell (a bytes.Reader, strings.Reader or regular
// file), or returns -1. Decoders use it only to allocate the whole image at
// once when the input is large enough to hold it.
func (b *byteReader) remaining() int64 {
	buffered := int64(b.end - b.pos)
	switch r := b.r.(type) {
	case interface{ Len() int }:
		return buffered + int64(r.Len())
	case *os.File:
		st, err := r.Stat()
		if err != nil || !st.Mode().IsRegular() {
			return -1
		}
		cur, err := r.Seek(0, io.SeekCurrent)
		if err != nil {
			return -1
		}
		return buffered + st.Size() - cur
	}
	return -1
}

// pixBuffer is the decoded image's float buffer. It grows as pixel data
// arrives, doubling up to the final size, unless the input was known to be
// large enough for the whole image, in which case it is allocated once.
type pixBuffer struct {
	pix   []float32
	total int // final length
}

const initialPixFloats = 1 << 20

func newPixBuffer(total int, wholeNow bool) *pixBuffer {
	p := &pixBuffer{total: total}
	if wholeNow {
		p.pix = make([]float32, 0, total)
	}
	return p
}

// extend lengthens pix to at least n floats (n <= total).
func (p *pixBuffer) extend(n int) {
	old := len(p.pix)
	if n <= old {
		return
	}
	if n > cap(p.pix) {
		c := max(2*cap(p.pix), initialPixFloats, n)
		c = min(c, p.total)
		grown := make([]float32, old, c)
		copy(grown, p.pix)
		p.pix = grown
	}
	p.pix = p.pix[:n]
}
