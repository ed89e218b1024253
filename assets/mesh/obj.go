package mesh

import (
	"bufio"
	"bytes"
	"fmt"
	"io"
	"math"
	"unicode/utf8"

	"patina/render"
)

// extraBit tags an OBJ output index that refers to an appended v/vt/vn
// combination; the final index is only known once all v lines are read.
const extraBit = 1 << 31

// objIgnored are the statements of the OBJ description that do not
// describe polygons (free-form geometry, lines, points, display and
// rendering attributes): read and skipped with one warning each.
var objIgnored = map[string]bool{
	"l": true, "p": true, "vp": true, "cstype": true, "deg": true, "bmat": true, "step": true,
	"curv": true, "curv2": true, "surf": true, "parm": true, "trim": true, "hole": true,
	"scrv": true, "sp": true, "end": true, "con": true, "mg": true, "bevel": true,
	"c_interp": true, "d_interp": true, "lod": true, "usemap": true, "maplib": true,
	"shadow_obj": true, "trace_obj": true, "ctech": true, "stech": true, "call": true, "csh": true,
}

type objReader struct {
	name string
	lr   lineReader
	rep  *Report
	line int // first line of the statement being read

	pos, tex, nrm    []float32
	firstVT, firstVN []int32 // per file vertex: vt/vn of its first use; -2 unused
	extra            map[[3]int32]uint32
	extraKeys        [][3]int32

	faces   faceSet
	grpKeys []int32
	names   []string
	nameIdx map[string]int32
	mtl     int32
	grp     int32
	anyMtl  bool

	anyVT, anyVN, missingVN bool
	idx                     []uint32
	joined                  []byte
	warned                  map[string]bool
}

// ReadOBJ reads a Wavefront OBJ mesh from r; name is used in errors.
func ReadOBJ(r io.Reader, name string) (*render.Mesh, *Report, error) {
	return readOBJ(r, name)
}

func readOBJ(r io.Reader, name string) (*render.Mesh, *Report, error) {
	o := &objReader{name: name, rep: &Report{Format: "obj"}, nameIdx: map[string]int32{}}
	o.lr.br = bufio.NewReaderSize(r, 1<<16)
	o.mtl = o.intern([]byte("default"))
	o.grp = o.mtl
	if err := o.read(); err != nil {
		return nil, nil, err
	}
	return o.finish()
}

// intern returns the index of a segment name; a name seen before costs no
// allocation.
func (o *objReader) intern(b []byte) int32 {
	if i, ok := o.nameIdx[string(b)]; ok {
		return i
	}
	s := string(b)
	i := int32(len(o.names))
	o.names = append(o.names, s)
	o.nameIdx[s] = i
	return i
}

func (o *objReader) errf(kw string, format string, args ...any) error {
	return &FormatError{File: o.name, Line: o.line, Record: -1, Offset: -1, Element: kw, Msg: fmt.Sprintf(format, args...)}
}

// statement returns the next logical line: physical lines ending in a
// backslash are joined with the next one.
func (o *objReader) statement() ([]byte, error) {
	b, err := o.lr.next()
	if err != nil {
		o.line = o.lr.line
		return nil, err
	}
	o.line = o.lr.line
	if len(b) == 0 || b[len(b)-1] != '\\' {
		return b, nil
	}
	o.joined = append(o.joined[:0], b[:len(b)-1]...)
	for {
		o.joined = append(o.joined, ' ')
		b, err = o.lr.next()
		if err == io.EOF {
			return o.joined, nil
		}
		if err != nil {
			return nil, err
		}
		if len(o.joined)+len(b) > MaxLineBytes {
			return nil, errLineTooLong
		}
		if len(b) > 0 && b[len(b)-1] == '\\' {
			o.joined = append(o.joined, b[:len(b)-1]...)
			continue
		}
		o.joined = append(o.joined, b...)
		return o.joined, nil
	}
}

// isText reports whether b is UTF-8 text without control characters other
// than tab.
func isText(b []byte) bool {
	for _, c := range b {
		if c < 0x20 && c != '\t' || c == 0x7f {
			return false
		}
	}
	return utf8.Valid(b)
}

func isKeyword(b []byte) bool {
	for _, c := range b {
		if !(c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || c == '_') {
			return false
		}
	}
	return true
}

func (o *objReader) read() error {
	sawFace := false
	for {
		b, err := o.statement()
		if err == io.EOF {
			break
		}
		if err == errLineTooLong {
			return o.errf("", "line longer than %d bytes", MaxLineBytes)
		}
		if err != nil {
			return fmt.Errorf("%s: %w", o.name, err)
		}
		t := tokens{b}
		kw := t.next()
		if kw == nil || kw[0] == '#' {
			continue
		}
		switch string(kw) {
		case "v":
			if err := o.vertex(&t); err != nil {
				return err
			}
		case "vt":
			var uv [3]float64
			n, err := o.numbers(&t, "vt", uv[:], 1, 3)
			if err != nil {
				return err
			}
			_ = n
			o.tex = append(room(o.tex, 2), float32(uv[0]), float32(uv[1]))
		case "vn":
			var nv [3]float64
			if _, err := o.numbers(&t, "vn", nv[:], 3, 3); err != nil {
				return err
			}
			o.nrm = append(room(o.nrm, 3), float32(nv[0]), float32(nv[1]), float32(nv[2]))
		case "f":
			if err := o.face(&t); err != nil {
				return err
			}
			sawFace = true
		case "g":
			rest := t.rest()
			if !isText(rest) {
				return o.errf("g", "group name is not UTF-8 text: %s", quote(rest))
			}
			if len(rest) == 0 {
				rest = []byte("default")
			}
			o.grp = o.intern(joinFields(rest))
		case "usemtl":
			rest := t.rest()
			if len(rest) == 0 {
				return o.errf("usemtl", "usemtl without a material name")
			}
			if !isText(rest) {
				return o.errf("usemtl", "material name is not UTF-8 text: %s", quote(rest))
			}
			o.mtl = o.intern(joinFields(rest))
			o.anyMtl = true
		case "o", "mtllib", "s":
			// Read and not needed: objects do not define segments, material
			// libraries are not used, and smooth normals are computed for
			// every face when the file has none.
			if rest := t.rest(); !isText(rest) {
				return o.errf(string(kw), "statement is not UTF-8 text: %s", quote(rest))
			}
		default:
			if !isKeyword(kw) || !isText(b) {
				return o.errf("", "not an OBJ statement (binary data or text that is not UTF-8?): %s", quote(b))
			}
			if !o.warned[string(kw)] {
				if o.warned == nil {
					o.warned = map[string]bool{}
				}
				o.warned[string(kw)] = true
				if objIgnored[string(kw)] {
					o.rep.warnf("line %d: %q statements describe no polygons: ignored", o.line, kw)
				} else {
					o.rep.warnf("line %d: unknown statement %q ignored", o.line, kw)
				}
			}
		}
	}
	if !sawFace {
		o.line = 0
		return &FormatError{File: o.name, Record: -1, Offset: -1, Msg: "no faces (f statements): not a polygon mesh"}
	}
	return nil
}

// joinFields collapses runs of space inside a name ("g a  b" -> "a b").
func joinFields(b []byte) []byte {
	if bytes.IndexAny(b, " \t") < 0 {
		return b
	}
	return bytes.Join(bytes.Fields(b), []byte{' '})
}

// numbers reads between lo and hi numbers into out and checks that nothing
// else follows.
func (o *objReader) numbers(t *tokens, kw string, out []float64, lo, hi int) (int, error) {
	n := 0
	for {
		tok := t.next()
		if tok == nil {
			break
		}
		if n == hi {
			return 0, o.errf(kw, "more than %d values", hi)
		}
		f, ok := parseFloat(tok, 32)
		if !ok {
			return 0, o.errf(kw, "%s is not a number", quote(tok))
		}
		if math.IsNaN(f) || math.IsInf(f, 0) || math.IsInf(float64(float32(f)), 0) {
			return 0, o.errf(kw, "value %d is %s (must be finite)", n+1, tok)
		}
		out[n] = f
		n++
	}
	if n < lo {
		return 0, o.errf(kw, "expected at least %d values, found %d", lo, n)
	}
	return n, nil
}

func (o *objReader) vertex(t *tokens) error {
	// x y z, then an optional weight w (used only by rational curves, so
	// ignored here) or the common r g b colour extension (also ignored).
	var v [7]float64
	if _, err := o.numbers(t, "v", v[:], 3, 7); err != nil {
		return err
	}
	if len(o.pos)/3+len(o.extraKeys) >= MaxVertices {
		return o.errf("v", "more than %d vertices", MaxVertices)
	}
	o.pos = append(room(o.pos, 3), float32(v[0]), float32(v[1]), float32(v[2]))
	o.firstVT = append(room(o.firstVT, 1), -2)
	o.firstVN = append(room(o.firstVN, 1), -2)
	return nil
}

// ref resolves one OBJ index (1-based, or negative counting back from the
// latest element) against count elements.
func (o *objReader) ref(b []byte, count int, what, plural string) (int32, error) {
	i, ok := parseInt(b)
	if !ok {
		return 0, o.errf("f", "%s index %s is not an integer", what, quote(b))
	}
	switch {
	case i == 0:
		return 0, o.errf("f", "%s index 0 (OBJ indices start at 1)", what)
	case i > 0 && i <= int64(count):
		return int32(i - 1), nil
	case i < 0 && -i <= int64(count):
		return int32(int64(count) + i), nil
	}
	return 0, o.errf("f", "%s index %d out of range (%d %s defined so far)", what, i, count, plural)
}

func (o *objReader) face(t *tokens) error {
	o.idx = o.idx[:0]
	nv, nt, nn := len(o.pos)/3, len(o.tex)/2, len(o.nrm)/3
	for {
		c := t.next()
		if c == nil {
			break
		}
		if len(o.idx) == MaxPolygonVertices {
			return o.errf("f", "face with more than %d vertices", MaxPolygonVertices)
		}
		var parts [3][]byte
		np := 0
		for np < 3 {
			j := bytes.IndexByte(c, '/')
			if j < 0 {
				parts[np] = c
				np++
				c = nil
				break
			}
			parts[np] = c[:j]
			np++
			c = c[j+1:]
		}
		if c != nil {
			return o.errf("f", "corner %d: more than three parts (want v, v/vt, v//vn or v/vt/vn)", len(o.idx)+1)
		}
		vi, err := o.ref(parts[0], nv, "vertex", "vertices")
		if err != nil {
			return err
		}
		ti, ni := int32(-1), int32(-1)
		if np > 1 && len(parts[1]) > 0 {
			if ti, err = o.ref(parts[1], nt, "texture coordinate", "texture coordinates"); err != nil {
				return err
			}
			o.anyVT = true
		}
		if np > 2 && len(parts[2]) > 0 {
			if ni, err = o.ref(parts[2], nn, "normal", "normals"); err != nil {
				return err
			}
			o.anyVN = true
		} else {
			o.missingVN = true
		}
		var out uint32
		switch {
		case o.firstVT[vi] == -2:
			o.firstVT[vi], o.firstVN[vi] = ti, ni
			out = uint32(vi)
		case o.firstVT[vi] == ti && o.firstVN[vi] == ni:
			out = uint32(vi)
		default:
			key := [3]int32{vi, ti, ni}
			k, ok := o.extra[key]
			if !ok {
				if len(o.pos)/3+len(o.extraKeys) >= MaxVertices {
					return o.errf("f", "more than %d vertices (distinct v/vt/vn combinations)", MaxVertices)
				}
				if o.extra == nil {
					o.extra = map[[3]int32]uint32{}
				}
				k = extraBit | uint32(len(o.extraKeys))
				o.extra[key] = k
				o.extraKeys = append(o.extraKeys, key)
			}
			out = k
		}
		o.idx = append(o.idx, out)
	}
	n := len(o.idx)
	if n < 3 {
		return o.errf("f", "face with %d vertices (a face needs at least 3)", n)
	}
	if o.faces.ntris+n-2 > MaxTriangles {
		return o.errf("f", "more than %d triangles", MaxTriangles)
	}
	o.faces.corners = append(room(o.faces.corners, len(o.idx)), o.idx...)
	o.faces.added(n, o.mtl, true)
	o.grpKeys = append(room(o.grpKeys, 1), o.grp)
	return nil
}

func (o *objReader) finish() (*render.Mesh, *Report, error) {
	nv := len(o.pos) / 3
	for i, c := range o.faces.corners {
		if c&extraBit != 0 {
			o.faces.corners[i] = uint32(nv) + c&^extraBit
		}
	}
	for _, k := range o.extraKeys {
		p := 3 * k[0]
		o.pos = append(o.pos, o.pos[p], o.pos[p+1], o.pos[p+2])
	}
	m := &render.Mesh{Positions: o.pos}
	total := m.NumVertices()
	if o.anyVT {
		m.UVs = make([]float32, 2*total)
		for i := 0; i < total; i++ {
			ti := int32(-1)
			if i < nv {
				ti = o.firstVT[i]
			} else {
				ti = o.extraKeys[i-nv][1]
			}
			if ti >= 0 {
				m.UVs[2*i], m.UVs[2*i+1] = o.tex[2*ti], o.tex[2*ti+1]
			}
		}
	}
	if !o.anyMtl {
		o.faces.keys = o.grpKeys
	}
	tris, keys := o.faces.triangulate(m.Positions, o.rep)
	m.Indices = tris
	if o.anyVN && !o.missingVN {
		m.Normals = make([]float32, 3*total)
		ok := true
		for i := 0; i < total && ok; i++ {
			ni := int32(-1)
			if i < nv {
				ni = o.firstVN[i]
			} else {
				ni = o.extraKeys[i-nv][2]
			}
			if ni < 0 {
				m.Normals[3*i+2] = 1 // a vertex no face uses
				continue
			}
			x, y, z := float64(o.nrm[3*ni]), float64(o.nrm[3*ni+1]), float64(o.nrm[3*ni+2])
			l := math.Sqrt(x*x + y*y + z*z)
			if l == 0 || math.IsInf(l, 0) {
				ok = false
				break
			}
			m.Normals[3*i], m.Normals[3*i+1], m.Normals[3*i+2] = float32(x/l), float32(y/l), float32(z/l)
		}
		if !ok {
			m.Normals = nil
			o.rep.warnf("some vertex normals have zero length: all normals recomputed")
		}
	} else if o.anyVN {
		o.rep.warnf("some face corners have no normal: all normals recomputed")
	}
	if m.Normals == nil {
		m.Normals = vertexNormals(m.Positions, m.Indices)
		o.rep.ComputedNormals = true
	}
	nameSegments(m, keys, o.names)
	o.rep.Triangles, o.rep.Vertices = m.NumTriangles(), m.NumVertices()
	if o.rep.Triangles == 0 {
		o.rep.warnf("the mesh has no triangles")
	}
	return m, o.rep, nil
}
