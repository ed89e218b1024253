package mesh

import (
	"bufio"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"unicode/utf8"

	"patina/render"
)

// plyType is a PLY scalar type.
type plyType uint8

const (
	tNone plyType = iota
	tInt8
	tUint8
	tInt16
	tUint16
	tInt32
	tUint32
	tFloat32
	tFloat64
	tInt64 // not in Turk's list; written by some tools (meshio names them)
	tUint64
)

var plyTypeNames = map[string]plyType{
	"char": tInt8, "int8": tInt8, "uchar": tUint8, "uint8": tUint8,
	"short": tInt16, "int16": tInt16, "ushort": tUint16, "uint16": tUint16,
	"int": tInt32, "int32": tInt32, "uint": tUint32, "uint32": tUint32,
	"float": tFloat32, "float32": tFloat32, "double": tFloat64, "float64": tFloat64,
	"int64": tInt64, "uint64": tUint64,
}

var plyTypeSize = [...]int{tNone: 0, tInt8: 1, tUint8: 1, tInt16: 2, tUint16: 2, tInt32: 4, tUint32: 4, tFloat32: 4, tFloat64: 8, tInt64: 8, tUint64: 8}

func (t plyType) isFloat() bool { return t == tFloat32 || t == tFloat64 }

func (t plyType) String() string {
	return [...]string{"none", "char", "uchar", "short", "ushort", "int", "uint", "float", "double", "int64", "uint64"}[t]
}

// intRange is the range of an integer type's values.
func (t plyType) intRange() (lo, hi int64) {
	switch t {
	case tInt8:
		return math.MinInt8, math.MaxInt8
	case tUint8:
		return 0, math.MaxUint8
	case tInt16:
		return math.MinInt16, math.MaxInt16
	case tUint16:
		return 0, math.MaxUint16
	case tInt32:
		return math.MinInt32, math.MaxInt32
	case tUint32:
		return 0, math.MaxUint32
	case tUint64:
		return 0, math.MaxInt64
	}
	return math.MinInt64, math.MaxInt64
}

// Property roles the reader cares about; everything else is skipped.
const (
	roleSkip = iota
	roleX
	roleY
	roleZ
	roleNX
	roleNY
	roleNZ
	roleU
	roleV
	roleIndices
	roleSegment
)

type plyProp struct {
	name    string
	typ     plyType // scalar type, or list item type
	list    bool
	count   plyType // list count type
	role    int
	minSize int // least bytes in binary
}

type plyElem struct {
	name  string
	count int64
	props []plyProp
	line  int

	// Set up by binaryElem for the fast paths.
	active   []activeProp // vertex: the scalars the reader keeps, at fixed offsets
	fixed    int          // record size when every property is a scalar, else 0
	triFace  bool         // face: indices list first, then scalars only
	restSize int          // face: bytes of the scalars after the list
}

// activeProp is a scalar the reader keeps, at a fixed offset in the record.
type activeProp struct {
	off  int
	typ  plyType
	role int
}

type plyReader struct {
	name     string
	lr       lineReader
	format   string // ascii, binary_little_endian, binary_big_endian
	big      bool
	elems    []*plyElem
	segNames map[int32]string
	rep      *Report
	size     int64 // total bytes of the input, -1 if unknown
	nv       int   // declared vertex count

	pos, nrm, uv []float32
	hasN, hasUV  bool
	faces        faceSet
	hasSeg       bool
	idx          []uint32
}

// ReadPLY reads a PLY mesh (ascii or binary, either byte order) from r; name
// is used in errors. When r can tell its remaining length (bytes.Reader,
// strings.Reader, *os.File), header counts are checked against it.
func ReadPLY(r io.Reader, name string) (*render.Mesh, *Report, error) {
	return readPLY(r, name, remainingSize(r))
}

func readPLY(r io.Reader, name string, size int64) (*render.Mesh, *Report, error) {
	p := &plyReader{name: name, size: size, rep: &Report{}}
	p.lr.br = bufio.NewReaderSize(r, 1<<16)
	if err := p.header(); err != nil {
		return nil, nil, err
	}
	p.rep.Format = "ply " + p.format
	if err := p.body(); err != nil {
		return nil, nil, err
	}
	return p.finish()
}

func (p *plyReader) headerErr(line int, format string, args ...any) error {
	return &FormatError{File: p.name, Line: line, Record: -1, Offset: -1, Element: "header", Msg: fmt.Sprintf(format, args...)}
}

func (p *plyReader) header() error {
	first, err := p.lr.next()
	if err != nil || string(first) != "ply" {
		got := first
		if len(got) > 16 {
			got = got[:16]
		}
		return p.headerErr(1, "not a PLY file: the first line must be \"ply\", found %s", quote(got))
	}
	var cur *plyElem
	names := map[string]bool{}
	for {
		b, err := p.lr.next()
		line := p.lr.line
		if err == io.EOF {
			return p.headerErr(line+1, "end of file inside the header (no end_header line)")
		}
		if err == errLineTooLong {
			return p.headerErr(line, "header line longer than %d bytes", MaxLineBytes)
		}
		if err != nil {
			return fmt.Errorf("%s: %w", p.name, err)
		}
		if p.lr.off > MaxHeaderBytes {
			return p.headerErr(line, "header longer than %d bytes", MaxHeaderBytes)
		}
		if !utf8.Valid(b) {
			return p.headerErr(line, "header line is not text (invalid UTF-8): %s", quote(b))
		}
		f := strings.Fields(string(b))
		if len(f) == 0 {
			continue
		}
		switch f[0] {
		case "comment":
			// Patina's own writer names segments this way.
			if len(f) >= 4 && f[1] == "segment" {
				if l, err := strconv.ParseInt(f[2], 10, 32); err == nil {
					if p.segNames == nil {
						p.segNames = map[int32]string{}
					}
					p.segNames[int32(l)] = strings.Join(f[3:], " ")
				}
			}
		case "obj_info":
		case "format":
			if p.format != "" {
				return p.headerErr(line, "second format line")
			}
			if len(f) != 3 {
				return p.headerErr(line, "format line must be \"format ascii|binary_little_endian|binary_big_endian 1.0\", found %s", quote(b))
			}
			switch f[1] {
			case "ascii", "binary_little_endian", "binary_big_endian":
			default:
				return p.headerErr(line, "unknown format %s (want ascii, binary_little_endian or binary_big_endian)", quote([]byte(f[1])))
			}
			if f[2] != "1.0" && f[2] != "1" {
				return &UnsupportedError{File: p.name, Line: line, Msg: fmt.Sprintf("PLY format version %s (only 1.0 is defined)", quote([]byte(f[2])))}
			}
			p.format = f[1]
			p.big = f[1] == "binary_big_endian"
		case "element":
			if len(f) != 3 {
				return p.headerErr(line, "element line must be \"element NAME COUNT\", found %s", quote(b))
			}
			n, err := strconv.ParseInt(f[2], 10, 64)
			if err != nil || n < 0 {
				return p.headerErr(line, "element %s: count %s is not a non-negative integer", f[1], quote([]byte(f[2])))
			}
			if names[f[1]] {
				return p.headerErr(line, "element %s declared twice", f[1])
			}
			if len(p.elems) >= MaxElements {
				return p.headerErr(line, "more than %d elements", MaxElements)
			}
			switch {
			case f[1] == "vertex" && n > MaxVertices:
				return p.headerErr(line, "element vertex: count %d exceeds the limit of %d vertices", n, MaxVertices)
			case f[1] == "face" && n > MaxTriangles:
				return p.headerErr(line, "element face: count %d exceeds the limit of %d faces", n, MaxTriangles)
			case n > math.MaxUint32:
				return p.headerErr(line, "element %s: count %d exceeds the limit of %d records", f[1], n, uint64(math.MaxUint32))
			}
			names[f[1]] = true
			cur = &plyElem{name: f[1], count: n, line: line}
			p.elems = append(p.elems, cur)
		case "property":
			if cur == nil {
				return p.headerErr(line, "property before any element")
			}
			if len(cur.props) >= MaxProperties {
				return p.headerErr(line, "element %s has more than %d properties", cur.name, MaxProperties)
			}
			var pr plyProp
			if len(f) >= 2 && f[1] == "list" {
				if len(f) != 5 {
					return p.headerErr(line, "list property must be \"property list COUNTTYPE ITEMTYPE NAME\", found %s", quote(b))
				}
				ct, ok1 := plyTypeNames[f[2]]
				it, ok2 := plyTypeNames[f[3]]
				if !ok1 {
					return p.headerErr(line, "unknown type name %s (want char uchar short ushort int uint float double or int8 ... float64)", quote([]byte(f[2])))
				}
				if !ok2 {
					return p.headerErr(line, "unknown type name %s (want char uchar short ushort int uint float double or int8 ... float64)", quote([]byte(f[3])))
				}
				if ct.isFloat() {
					return p.headerErr(line, "list count type %s must be an integer type", f[2])
				}
				pr = plyProp{name: f[4], typ: it, list: true, count: ct, minSize: plyTypeSize[ct]}
			} else {
				if len(f) != 3 {
					return p.headerErr(line, "property must be \"property TYPE NAME\", found %s", quote(b))
				}
				t, ok := plyTypeNames[f[1]]
				if !ok {
					return p.headerErr(line, "unknown type name %s (want char uchar short ushort int uint float double or int8 ... float64)", quote([]byte(f[1])))
				}
				pr = plyProp{name: f[2], typ: t, minSize: plyTypeSize[t]}
			}
			for _, q := range cur.props {
				if q.name == pr.name {
					return p.headerErr(line, "element %s: property %s declared twice", cur.name, pr.name)
				}
			}
			cur.props = append(cur.props, pr)
		case "end_header":
			if p.format == "" {
				return p.headerErr(line, "no format line before end_header")
			}
			return p.checkHeader(line)
		default:
			return p.headerErr(line, "unknown header keyword %s (want format, comment, obj_info, element, property or end_header)", quote([]byte(f[0])))
		}
	}
}

// checkHeader assigns roles and checks the declared sizes.
func (p *plyReader) checkHeader(endLine int) error {
	var vert, face *plyElem
	for _, e := range p.elems {
		switch e.name {
		case "vertex":
			vert = e
		case "face":
			face = e
		}
	}
	if vert == nil {
		return p.headerErr(endLine, "no vertex element")
	}
	if face == nil {
		return p.headerErr(endLine, "no face element (Patina needs a polygon mesh, not a point cloud)")
	}
	roles := map[string]int{"x": roleX, "y": roleY, "z": roleZ, "nx": roleNX, "ny": roleNY, "nz": roleNZ}
	uvPairs := [][2]string{{"s", "t"}, {"u", "v"}, {"texture_u", "texture_v"}, {"texture_s", "texture_t"}}
	have := map[string]int{}
	for i, pr := range vert.props {
		if !pr.list {
			have[pr.name] = i
		}
	}
	for _, c := range []string{"x", "y", "z"} {
		if _, ok := have[c]; !ok {
			for _, pr := range vert.props {
				if pr.name == c {
					return p.headerErr(vert.line, "element vertex: property %s must be a scalar, not a list", c)
				}
			}
			return p.headerErr(vert.line, "element vertex has no property %s", c)
		}
	}
	for _, c := range []string{"x", "y", "z"} {
		vert.props[have[c]].role = roles[c]
	}
	_, a := have["nx"]
	_, b := have["ny"]
	_, c := have["nz"]
	if a && b && c {
		p.hasN = true
		for _, n := range []string{"nx", "ny", "nz"} {
			vert.props[have[n]].role = roles[n]
		}
	} else if a || b || c {
		p.rep.warnf("vertex normals incomplete (need nx, ny and nz): ignored")
	}
	for _, pair := range uvPairs {
		iu, ok1 := have[pair[0]]
		iv, ok2 := have[pair[1]]
		if ok1 && ok2 {
			vert.props[iu].role, vert.props[iv].role = roleU, roleV
			p.hasUV = true
			break
		}
	}
	foundIdx := false
	for i := range face.props {
		pr := &face.props[i]
		switch pr.name {
		case "vertex_indices", "vertex_index":
			if foundIdx {
				continue
			}
			if !pr.list {
				return p.headerErr(face.line, "element face: property %s must be a list", pr.name)
			}
			if pr.typ.isFloat() {
				return p.headerErr(face.line, "element face: %s item type %s must be an integer type", pr.name, pr.typ)
			}
			pr.role, foundIdx = roleIndices, true
		case "segment":
			if pr.list || pr.typ.isFloat() {
				return p.headerErr(face.line, "element face: property segment must be an integer scalar")
			}
			pr.role, p.hasSeg = roleSegment, true
		}
	}
	if !foundIdx {
		return p.headerErr(face.line, "element face has no list property vertex_indices (or vertex_index)")
	}
	p.nv = int(vert.count)
	if p.size >= 0 {
		left := p.size - p.lr.off
		slack := int64(0)
		if p.format == "ascii" {
			slack = 1 // the last line may lack its newline
		}
		var need int64
		for _, e := range p.elems {
			rec := int64(0)
			for _, pr := range e.props {
				if p.format == "ascii" {
					rec += 2 // one digit and a separator
				} else {
					rec += int64(pr.minSize)
				}
			}
			need += e.count * rec
			if need > left+slack {
				return p.headerErr(e.line, "element %s: %d records need at least %d bytes, but only %d bytes follow the header", e.name, e.count, e.count*rec, left)
			}
		}
	}
	return nil
}

// capHint is the capacity to reserve for n records: all of them when the
// size check has bounded n by the file's length, else a modest start so a
// lying header on a stream costs nothing.
func (p *plyReader) capHint(n int64) int {
	if p.size >= 0 || n < 1<<16 {
		return int(n)
	}
	return 1 << 16
}

func (p *plyReader) body() error {
	for _, e := range p.elems {
		switch e.name {
		case "vertex":
			p.pos = make([]float32, 0, 3*p.capHint(e.count))
			if p.hasN {
				p.nrm = make([]float32, 0, 3*p.capHint(e.count))
			}
			if p.hasUV {
				p.uv = make([]float32, 0, 2*p.capHint(e.count))
			}
		case "face":
			p.faces.corners = make([]uint32, 0, 3*p.capHint(e.count))
			if p.hasSeg {
				p.faces.keys = make([]int32, 0, p.capHint(e.count))
			}
		}
		var err error
		if p.format == "ascii" {
			err = p.asciiElem(e)
		} else {
			err = p.binaryElem(e)
		}
		if err != nil {
			return err
		}
	}
	if p.format == "ascii" {
		for {
			b, err := p.lr.next()
			if err != nil {
				break
			}
			t := tokens{b}
			if t.next() != nil {
				p.rep.warnf("line %d: data after the last element ignored", p.lr.line)
				break
			}
		}
	} else if b, _ := p.lr.br.Peek(1); len(b) > 0 {
		p.rep.warnf("byte %d: data after the last element ignored", p.lr.off)
	}
	return nil
}

// record holds one vertex's values while it is read.
type record struct {
	v   [roleSegment + 1]float64
	seg int64
}

func (p *plyReader) asciiErr(e *plyElem, rec int, format string, args ...any) error {
	return &FormatError{File: p.name, Line: p.lr.line, Record: rec, Offset: -1, Element: e.name, Msg: fmt.Sprintf(format, args...)}
}

func (p *plyReader) asciiElem(e *plyElem) error {
	if len(e.props) == 0 {
		return nil
	}
	var rc record
	for r := 0; r < int(e.count); r++ {
		var b []byte
		for {
			var err error
			b, err = p.lr.next()
			if err == io.EOF {
				p.lr.line++
				return p.asciiErr(e, r, "unexpected end of file: the header declares %d %s records, found %d", e.count, e.name, r)
			}
			if err == errLineTooLong {
				return p.asciiErr(e, r, "line longer than %d bytes", MaxLineBytes)
			}
			if err != nil {
				return fmt.Errorf("%s: %w", p.name, err)
			}
			if len(bytesTrimSpace(b)) > 0 {
				break
			}
		}
		t := tokens{b}
		p.idx = p.idx[:0]
		for i := range e.props {
			pr := &e.props[i]
			tok := t.next()
			if tok == nil {
				return p.asciiErr(e, r, "expected a value for property %s, found end of line", pr.name)
			}
			if pr.list {
				n, ok := parseInt(tok)
				lo, hi := pr.count.intRange()
				if !ok || n < lo || n > hi {
					return p.asciiErr(e, r, "list %s: count %s is not a %s", pr.name, quote(tok), pr.count)
				}
				if n < 0 {
					return p.asciiErr(e, r, "list %s: negative count %d", pr.name, n)
				}
				if pr.role == roleIndices {
					if err := p.checkPolygon(n, func(f string, a ...any) error { return p.asciiErr(e, r, f, a...) }); err != nil {
						return err
					}
				}
				for k := int64(0); k < n; k++ {
					it := t.next()
					if it == nil {
						return p.asciiErr(e, r, "list %s: expected %d items, found %d", pr.name, n, k)
					}
					if pr.role != roleIndices {
						continue
					}
					v, ok := asciiInt(it, pr.typ)
					if !ok {
						return p.asciiErr(e, r, "list %s: item %s is not a %s", pr.name, quote(it), pr.typ)
					}
					if v < 0 || v >= int64(p.nv) {
						return p.asciiErr(e, r, "index %d out of range (vertex count %d)", v, p.nv)
					}
					p.idx = append(p.idx, uint32(v))
				}
				continue
			}
			if pr.role == roleSkip {
				continue
			}
			if pr.typ.isFloat() {
				bits := 64
				if pr.typ == tFloat32 {
					bits = 32
				}
				f, ok := parseFloat(tok, bits)
				if !ok {
					return p.asciiErr(e, r, "property %s: %s is not a number", pr.name, quote(tok))
				}
				rc.v[pr.role] = f
			} else {
				v, ok := asciiInt(tok, pr.typ)
				if !ok {
					return p.asciiErr(e, r, "property %s: %s is not a %s", pr.name, quote(tok), pr.typ)
				}
				rc.v[pr.role] = float64(v)
				rc.seg = v
			}
		}
		if t.next() != nil {
			return p.asciiErr(e, r, "more values than the %d properties of element %s (does the header give the right %s count?)", len(e.props), e.name, e.name)
		}
		if err := p.store(e, &rc, func(f string, a ...any) error { return p.asciiErr(e, r, f, a...) }); err != nil {
			return err
		}
	}
	return nil
}

func bytesTrimSpace(b []byte) []byte {
	t := tokens{b}
	return t.rest()
}

// asciiInt parses an integer of type t; a float with an integral value is
// accepted as some writers print integers that way.
func asciiInt(tok []byte, t plyType) (int64, bool) {
	v, ok := parseInt(tok)
	if !ok {
		f, err := strconv.ParseFloat(string(tok), 64)
		if err != nil || f != math.Trunc(f) || math.Abs(f) > 1<<53 {
			return 0, false
		}
		v = int64(f)
	}
	lo, hi := t.intRange()
	if t.isFloat() {
		lo, hi = math.MinInt64, math.MaxInt64
	}
	return v, v >= lo && v <= hi
}

func (p *plyReader) checkPolygon(n int64, fail func(string, ...any) error) error {
	if n < 3 {
		return fail("face with %d vertices (a face needs at least 3)", n)
	}
	if n > MaxPolygonVertices {
		return fail("face with %d vertices exceeds the limit of %d", n, MaxPolygonVertices)
	}
	if int64(p.faces.ntris)+n-2 > MaxTriangles {
		return fail("more than %d triangles", MaxTriangles)
	}
	return nil
}

// store keeps one record of the vertex or face element.
func (p *plyReader) store(e *plyElem, rc *record, fail func(string, ...any) error) error {
	switch e.name {
	case "vertex":
		for k, c := range [3]string{"x", "y", "z"} {
			f := float32(rc.v[roleX+k])
			if math.IsNaN(float64(f)) || math.IsInf(float64(f), 0) {
				return fail("coordinate %s is %v", c, rc.v[roleX+k])
			}
		}
		p.pos = append(room(p.pos, 3), float32(rc.v[roleX]), float32(rc.v[roleY]), float32(rc.v[roleZ]))
		if p.hasN {
			for k, c := range [3]string{"nx", "ny", "nz"} {
				if f := float32(rc.v[roleNX+k]); math.IsNaN(float64(f)) || math.IsInf(float64(f), 0) {
					return fail("normal %s is %v", c, rc.v[roleNX+k])
				}
			}
			p.nrm = append(room(p.nrm, 3), float32(rc.v[roleNX]), float32(rc.v[roleNY]), float32(rc.v[roleNZ]))
		}
		if p.hasUV {
			for k := 0; k < 2; k++ {
				if f := float32(rc.v[roleU+k]); math.IsNaN(float64(f)) || math.IsInf(float64(f), 0) {
					return fail("texture coordinate %d is %v", k, rc.v[roleU+k])
				}
			}
			p.uv = append(room(p.uv, 2), float32(rc.v[roleU]), float32(rc.v[roleV]))
		}
	case "face":
		if p.hasSeg && (rc.seg < math.MinInt32 || rc.seg > math.MaxInt32) {
			return fail("segment %d out of range (32-bit integer)", rc.seg)
		}
		p.faces.corners = append(room(p.faces.corners, len(p.idx)), p.idx...)
		p.faces.added(len(p.idx), int32(rc.seg), p.hasSeg)
	}
	return nil
}

var errShort = errors.New("short")

// take returns the next n bytes of binary data (valid until the next read).
func (p *plyReader) take(n int) ([]byte, error) {
	b, err := p.lr.br.Peek(n)
	if len(b) < n {
		if err == nil || err == io.EOF || err == bufio.ErrBufferFull {
			return nil, errShort
		}
		return nil, err
	}
	p.lr.br.Discard(n)
	p.lr.off += int64(n)
	return b, nil
}

// skip discards n bytes of binary data.
func (p *plyReader) skip(n int64) error {
	if p.size >= 0 && n > p.size-p.lr.off {
		return errShort
	}
	for n > 0 {
		k := int(min(n, 1<<30))
		d, err := p.lr.br.Discard(k)
		p.lr.off += int64(d)
		n -= int64(d)
		if err != nil {
			if err == io.EOF {
				return errShort
			}
			return err
		}
	}
	return nil
}

func (p *plyReader) u16(b []byte) uint16 {
	if p.big {
		return binary.BigEndian.Uint16(b)
	}
	return binary.LittleEndian.Uint16(b)
}

func (p *plyReader) u32(b []byte) uint32 {
	if p.big {
		return binary.BigEndian.Uint32(b)
	}
	return binary.LittleEndian.Uint32(b)
}

func (p *plyReader) u64(b []byte) uint64 {
	if p.big {
		return binary.BigEndian.Uint64(b)
	}
	return binary.LittleEndian.Uint64(b)
}

// decode reads one binary scalar of type t as an integer (for integer
// types) and as a float.
func (p *plyReader) decode(b []byte, t plyType) (int64, float64) {
	switch t {
	case tFloat32:
		return 0, float64(math.Float32frombits(p.u32(b)))
	case tInt32:
		v := int64(int32(p.u32(b)))
		return v, float64(v)
	case tUint32:
		v := int64(p.u32(b))
		return v, float64(v)
	case tUint8:
		v := int64(b[0])
		return v, float64(v)
	case tInt8:
		v := int64(int8(b[0]))
		return v, float64(v)
	case tInt16:
		v := int64(int16(p.u16(b)))
		return v, float64(v)
	case tUint16:
		v := int64(p.u16(b))
		return v, float64(v)
	case tFloat64:
		return 0, math.Float64frombits(p.u64(b))
	case tInt64:
		v := int64(p.u64(b))
		return v, float64(v)
	case tUint64:
		u := p.u64(b)
		if u > math.MaxInt64 {
			return -1, float64(u) // out of every range check below
		}
		return int64(u), float64(u)
	}
	return 0, 0
}

func (p *plyReader) binaryElem(e *plyElem) error {
	recSize, fixed := 0, true
	for _, pr := range e.props {
		if pr.list {
			fixed = false
		}
		recSize += pr.minSize
	}
	if e.name != "vertex" && e.name != "face" && fixed {
		// Unknown element of fixed-size records: skip it whole.
		start := p.lr.off
		if err := p.skip(e.count * int64(recSize)); err != nil {
			rec := 0
			if recSize > 0 {
				rec = int((p.lr.off - start) / int64(recSize))
			}
			return p.binErr(e, rec, start+int64(rec*recSize), "unexpected end of data: the header declares %d %s records, the file ends inside record %d", e.count, e.name, rec)
		}
		return nil
	}
	e.fixed, e.active, e.triFace, e.restSize = 0, nil, false, 0
	if fixed {
		e.fixed = recSize
		off := 0
		for _, pr := range e.props {
			if pr.role != roleSkip {
				e.active = append(e.active, activeProp{off, pr.typ, pr.role})
			}
			off += pr.minSize
		}
	}
	if e.name == "face" && e.props[0].role == roleIndices {
		e.triFace = true
		for _, pr := range e.props[1:] {
			if pr.list {
				e.triFace = false
			}
			e.restSize += pr.minSize
		}
	}
	var rc record
	br := p.lr.br
	for r := 0; r < int(e.count); {
		// Fast path: decode whole records straight from what is buffered.
		win, _ := br.Peek(br.Buffered())
		used := 0
		for r < int(e.count) {
			n, err := p.windowRecord(e, win[used:], &rc, r, p.lr.off+int64(used))
			if err != nil {
				return err
			}
			if n == 0 {
				break
			}
			used += n
			r++
		}
		br.Discard(used)
		p.lr.off += int64(used)
		if used == 0 && r < int(e.count) {
			// The record is not all buffered (or is bigger than the
			// buffer, or the data ends): read it property by property.
			if err := p.slowRecord(e, &rc, r); err != nil {
				return err
			}
			r++
		}
	}
	return nil
}

// windowRecord decodes record r from b when b holds all of it, and returns
// its length, or 0 when b is too short.
func (p *plyReader) windowRecord(e *plyElem, b []byte, rc *record, r int, at int64) (int, error) {
	if e.fixed > 0 && e.name == "vertex" {
		if len(b) < e.fixed {
			return 0, nil
		}
		for _, a := range e.active {
			_, rc.v[a.role] = p.decode(b[a.off:], a.typ)
		}
		if err := p.store(e, rc, func(f string, a ...any) error { return p.binErr(e, r, at, f, a...) }); err != nil {
			return 0, err
		}
		return e.fixed, nil
	}
	if e.triFace && len(b) > 0 {
		// The common face: a triangle, then the segment (if any).
		pr := &e.props[0]
		if n, _ := p.decode(b, pr.count); n == 3 {
			isz := plyTypeSize[pr.typ]
			size := pr.minSize + 3*isz + e.restSize
			if len(b) < size {
				return 0, nil
			}
			i := pr.minSize
			var tri [3]uint32
			for k := 0; k < 3; k++ {
				v, _ := p.decode(b[i:], pr.typ)
				if v < 0 || v >= int64(p.nv) {
					return 0, p.binErr(e, r, at, "index %d out of range (vertex count %d)", v, p.nv)
				}
				tri[k] = uint32(v)
				i += isz
			}
			if p.faces.ntris+1 > MaxTriangles {
				return 0, p.binErr(e, r, at, "more than %d triangles", MaxTriangles)
			}
			for _, q := range e.props[1:] {
				if q.role == roleSegment {
					rc.seg, _ = p.decode(b[i:], q.typ)
				}
				i += q.minSize
			}
			if p.hasSeg && (rc.seg < math.MinInt32 || rc.seg > math.MaxInt32) {
				return 0, p.binErr(e, r, at, "segment %d out of range (32-bit integer)", rc.seg)
			}
			p.faces.corners = append(room(p.faces.corners, 3), tri[0], tri[1], tri[2])
			p.faces.added(3, int32(rc.seg), p.hasSeg)
			return size, nil
		}
	}
	i := 0
	p.idx = p.idx[:0]
	for k := range e.props {
		pr := &e.props[k]
		if i+pr.minSize > len(b) {
			return 0, nil
		}
		if !pr.list {
			if pr.role != roleSkip {
				iv, fv := p.decode(b[i:], pr.typ)
				rc.v[pr.role] = fv
				rc.seg = iv
			}
			i += pr.minSize
			continue
		}
		n, _ := p.decode(b[i:], pr.count)
		i += pr.minSize
		isz := plyTypeSize[pr.typ]
		if n < 0 || n > int64(len(b)) {
			return 0, nil // the slow path reports it, or reads a long list
		}
		if pr.role != roleIndices {
			if i+int(n)*isz > len(b) {
				return 0, nil
			}
			i += int(n) * isz
			continue
		}
		if err := p.checkPolygon(n, func(f string, a ...any) error { return p.binErr(e, r, at, f, a...) }); err != nil {
			return 0, err
		}
		if i+int(n)*isz > len(b) {
			return 0, nil
		}
		for j := 0; j < int(n); j++ {
			v, _ := p.decode(b[i:], pr.typ)
			i += isz
			if v < 0 || v >= int64(p.nv) {
				return 0, p.binErr(e, r, at, "index %d out of range (vertex count %d)", v, p.nv)
			}
			p.idx = append(p.idx, uint32(v))
		}
	}
	if err := p.store(e, rc, func(f string, a ...any) error { return p.binErr(e, r, at, f, a...) }); err != nil {
		return 0, err
	}
	return i, nil
}

// slowRecord reads record r property by property, filling the buffer as
// needed and skipping lists of any length.
func (p *plyReader) slowRecord(e *plyElem, rc *record, r int) error {
	at := p.lr.off
	short := func() error {
		return p.binErr(e, r, at, "unexpected end of data: the header declares %d %s records, the file ends inside record %d", e.count, e.name, r)
	}
	p.idx = p.idx[:0]
	for i := range e.props {
		pr := &e.props[i]
		if !pr.list {
			b, err := p.take(pr.minSize)
			if err == errShort {
				return short()
			} else if err != nil {
				return fmt.Errorf("%s: %w", p.name, err)
			}
			if pr.role == roleSkip {
				continue
			}
			iv, fv := p.decode(b, pr.typ)
			rc.v[pr.role] = fv
			rc.seg = iv
			continue
		}
		b, err := p.take(pr.minSize)
		if err == errShort {
			return short()
		} else if err != nil {
			return fmt.Errorf("%s: %w", p.name, err)
		}
		n, _ := p.decode(b, pr.count)
		if n < 0 {
			return p.binErr(e, r, at, "list %s: negative count %d", pr.name, n)
		}
		isz := int64(plyTypeSize[pr.typ])
		if pr.role != roleIndices {
			if err := p.skip(n * isz); err == errShort {
				if p.size >= 0 {
					return p.binErr(e, r, at, "list %s: count %d needs %d bytes, but only %d bytes are left", pr.name, n, n*isz, p.size-p.lr.off)
				}
				return short()
			} else if err != nil {
				return fmt.Errorf("%s: %w", p.name, err)
			}
			continue
		}
		if err := p.checkPolygon(n, func(f string, a ...any) error { return p.binErr(e, r, at, f, a...) }); err != nil {
			return err
		}
		b, err = p.take(int(n * isz))
		if err == errShort {
			return short()
		} else if err != nil {
			return fmt.Errorf("%s: %w", p.name, err)
		}
		for k := 0; k < int(n); k++ {
			v, _ := p.decode(b[k*int(isz):], pr.typ)
			if v < 0 || v >= int64(p.nv) {
				return p.binErr(e, r, at, "index %d out of range (vertex count %d)", v, p.nv)
			}
			p.idx = append(p.idx, uint32(v))
		}
	}
	if err := p.store(e, rc, func(f string, a ...any) error { return p.binErr(e, r, at, f, a...) }); err != nil {
		return err
	}
	return nil
}

func (p *plyReader) binErr(e *plyElem, rec int, off int64, format string, args ...any) error {
	return &FormatError{File: p.name, Record: rec, Offset: off, Element: e.name, Msg: fmt.Sprintf(format, args...)}
}

func (p *plyReader) finish() (*render.Mesh, *Report, error) {
	if len(p.pos)/3 != p.nv {
		// Cannot happen: every declared record was read or an error returned.
		return nil, nil, fmt.Errorf("%s: internal error: read %d of %d vertices", p.name, len(p.pos)/3, p.nv)
	}
	m := &render.Mesh{Positions: p.pos, UVs: p.uv}
	tris, keys := p.faces.triangulate(p.pos, p.rep)
	m.Indices = tris
	if p.hasN {
		ok := true
		for i := 0; i+2 < len(p.nrm); i += 3 {
			x, y, z := float64(p.nrm[i]), float64(p.nrm[i+1]), float64(p.nrm[i+2])
			l := math.Sqrt(x*x + y*y + z*z)
			if l == 0 {
				ok = false
				break
			}
			p.nrm[i], p.nrm[i+1], p.nrm[i+2] = float32(x/l), float32(y/l), float32(z/l)
		}
		if ok {
			m.Normals = p.nrm
		} else {
			p.rep.warnf("some vertex normals have zero length: all normals recomputed")
		}
	}
	if m.Normals == nil {
		m.Normals = vertexNormals(m.Positions, m.Indices)
		p.rep.ComputedNormals = true
	}
	if p.hasSeg {
		labelSegments(m, keys, p.segNames)
	} else {
		labelSegments(m, nil, nil)
	}
	p.rep.Triangles, p.rep.Vertices = m.NumTriangles(), m.NumVertices()
	if p.rep.Triangles == 0 {
		p.rep.warnf("the mesh has no triangles")
	}
	return m, p.rep, nil
}
