package capture

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"strconv"
)

// kind is the JSON type of a parsed value.
type kind uint8

const (
	kNull kind = iota
	kBool
	kNumber
	kString
	kArray
	kObject
)

func (k kind) String() string {
	return [...]string{"null", "a boolean", "a number", "a string", "an array", "an object"}[k]
}

// node is one parsed JSON value with the byte offset where it starts, so
// that every later complaint about it can name its line and column as well
// as its JSON path.
type node struct {
	kind kind
	off  int
	str  string // string value, or the literal text of a number
	b    bool
	arr  []*node
	keys []string
	vals []*node
	koff []int // offset of each key
}

// maxDepth bounds the nesting of a capture file; the format needs four.
const maxDepth = 32

// syntaxError is a JSON syntax error at a byte offset.
type syntaxError struct {
	off int
	msg string
}

func (e *syntaxError) Error() string { return e.msg }

// parseTree parses data into a tree of nodes. It uses encoding/json's
// tokenizer for the grammar and records where each value begins.
func parseTree(data []byte) (*node, error) {
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.UseNumber()
	p := &treeParser{dec: dec, data: data}
	root, err := p.value(0)
	if err != nil {
		return nil, err
	}
	if _, err := dec.Token(); err != io.EOF {
		off := p.skipSpace(int(dec.InputOffset()))
		if err == nil || isSyntax(err) {
			return nil, &syntaxError{off: off, msg: "unexpected data after the top-level value"}
		}
		return nil, p.wrap(err)
	}
	return root, nil
}

func isSyntax(err error) bool {
	var se *json.SyntaxError
	return errors.As(err, &se)
}

type treeParser struct {
	dec  *json.Decoder
	data []byte
}

// skipSpace returns the offset of the next token at or after off.
func (p *treeParser) skipSpace(off int) int {
	for off < len(p.data) {
		switch p.data[off] {
		case ' ', '\t', '\r', '\n', ':', ',':
			off++
		default:
			return off
		}
	}
	return off
}

func (p *treeParser) wrap(err error) error {
	var se *json.SyntaxError
	if errors.As(err, &se) {
		return &syntaxError{off: int(se.Offset), msg: se.Error()}
	}
	if err == io.EOF || errors.Is(err, io.ErrUnexpectedEOF) {
		return &syntaxError{off: len(p.data), msg: "unexpected end of the file (an object or array is not closed)"}
	}
	return &syntaxError{off: int(p.dec.InputOffset()), msg: err.Error()}
}

func (p *treeParser) token() (json.Token, int, error) {
	off := p.skipSpace(int(p.dec.InputOffset()))
	tok, err := p.dec.Token()
	if err != nil {
		return nil, off, p.wrap(err)
	}
	return tok, off, nil
}

func (p *treeParser) value(depth int) (*node, error) {
	tok, off, err := p.token()
	if err != nil {
		return nil, err
	}
	return p.fromToken(tok, off, depth)
}

func (p *treeParser) fromToken(tok json.Token, off, depth int) (*node, error) {
	n := &node{off: off}
	switch t := tok.(type) {
	case nil:
		n.kind = kNull
	case bool:
		n.kind, n.b = kBool, t
	case json.Number:
		n.kind, n.str = kNumber, string(t)
	case string:
		n.kind, n.str = kString, t
	case json.Delim:
		if depth >= maxDepth {
			return nil, &syntaxError{off: off, msg: fmt.Sprintf("nesting deeper than %d levels", maxDepth)}
		}
		switch t {
		case '[':
			n.kind = kArray
			for p.dec.More() {
				v, err := p.value(depth + 1)
				if err != nil {
					return nil, err
				}
				n.arr = append(n.arr, v)
			}
		case '{':
			n.kind = kObject
			for p.dec.More() {
				ktok, koff, err := p.token()
				if err != nil {
					return nil, err
				}
				key, ok := ktok.(string)
				if !ok {
					return nil, &syntaxError{off: koff, msg: "expected a field name in quotes"}
				}
				v, err := p.value(depth + 1)
				if err != nil {
					return nil, err
				}
				n.keys = append(n.keys, key)
				n.koff = append(n.koff, koff)
				n.vals = append(n.vals, v)
			}
		default:
			return nil, &syntaxError{off: off, msg: fmt.Sprintf("unexpected %q", rune(t))}
		}
		if _, _, err := p.token(); err != nil { // the closing delimiter
			return nil, err
		}
	default:
		return nil, &syntaxError{off: off, msg: fmt.Sprintf("unexpected token %v", tok)}
	}
	return n, nil
}

// describe names a node's type and, for scalars, its value, for messages
// like `expected a number, got a string "NaN"`.
func (n *node) describe() string {
	switch n.kind {
	case kString:
		s := n.str
		if len(s) > 40 {
			s = s[:40] + "..."
		}
		return "a string " + strconv.Quote(s)
	case kNumber:
		return "the number " + n.str
	case kBool:
		return "the boolean " + strconv.FormatBool(n.b)
	}
	return n.kind.String()
}
