// Package mesh reads and writes the triangle meshes Patina works on: PLY
// (ascii, binary_little_endian and binary_big_endian, as described in Greg
// Turk's "The PLY Polygon File Format") and Wavefront OBJ (the polygonal
// subset of the Wavefront OBJ description: v, vt, vn, f, g, o, usemtl,
// mtllib, s). Every reader produces a render.Mesh: float32 positions,
// optional normals and UVs, triangles, and one segment index per triangle.
//
// # What the readers do
//
//   - Polygons are triangulated: triangles as they are, polygons by ear
//     clipping in the polygon's own plane (the Newell normal), so non-convex
//     faces come out right.
//   - Degenerate triangles (a repeated vertex index, or an area that is
//     exactly zero in float64 arithmetic on the stored float32 positions) are
//     counted in Report.Degenerate and dropped with a warning.
//   - When the file has no normals, angle-weighted vertex normals are computed
//     (each face contributes its unit normal weighted by its corner angle, as
//     in Thürmer and Wüthrich, "Computing vertex normals from polygonal
//     facets", JGT 3(1), 1998). A vertex no face uses gets the normal +Z.
//   - Segments. PLY: the integer face property "segment" becomes
//     SegmentLabels with Label set and Name empty (or the name a Patina
//     "comment segment LABEL NAME" header line gives), sorted by ascending
//     Label; a file without the property gives one segment, Label 0. OBJ:
//     faces are grouped by their usemtl name; a file without any usemtl is
//     grouped by its g names instead; faces before the first usemtl (or g)
//     belong to the segment "default". OBJ segments have Label -1 and appear
//     in the order their first kept triangle appears.
//   - OBJ vertices are re-indexed into one index space: each distinct
//     v/vt/vn combination a face uses is one output vertex. File vertex i
//     stays output vertex i (with the vt/vn of its first use); other
//     combinations of the same position are appended after the file's
//     vertices, in order of first use.
//
// # Errors and limits
//
// A malformed file gives a *FormatError naming the file and the place: the
// line for text (PLY header, ascii PLY, OBJ), the element record and byte
// offset for binary PLY. Valid input that Patina does not handle gives an
// *UnsupportedError. Counts from a header are checked against MaxVertices,
// MaxTriangles and MaxPolygonVertices, and, when the reader knows how many
// bytes follow, against the least space those records need, before anything
// is allocated. No input makes a reader panic.
package mesh

import (
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"

	"patina/assets/atomicfile"
	"patina/render"
)

// Limits checked before allocation. A vertex costs up to 32 bytes of output
// (position, normal, UV) and a triangle 16 (indices, segment), so the limits
// bound a mesh at about 2 GB.
const (
	// MaxVertices is the largest vertex count a mesh file may declare or hold.
	MaxVertices = 1 << 25 // 33,554,432
	// MaxTriangles is the largest number of triangles (after triangulation)
	// and of faces a mesh file may declare or hold.
	MaxTriangles = 1 << 26 // 67,108,864
	// MaxPolygonVertices is the most corners one face may have. Ear clipping
	// costs O(n^2) per polygon; scanned meshes use triangles and quads.
	MaxPolygonVertices = 256
	// MaxLineBytes is the longest text line (after joining OBJ continuation
	// lines) the readers accept.
	MaxLineBytes = 1 << 20
	// MaxHeaderBytes is the longest PLY header accepted.
	MaxHeaderBytes = 1 << 20
	// MaxElements and MaxProperties bound a PLY header's element list and
	// each element's property list.
	MaxElements   = 1024
	MaxProperties = 1024
)

// Report says what a reader found besides the mesh itself.
type Report struct {
	// Format is "ply ascii", "ply binary_little_endian",
	// "ply binary_big_endian" or "obj".
	Format string
	// Triangles and Vertices count the returned mesh.
	Triangles, Vertices int
	// Degenerate counts the triangles dropped because they had a repeated
	// vertex or zero area.
	Degenerate int
	// Warnings lists things the reader accepted but the user should know.
	Warnings []string
	// ComputedNormals is true when the file had no (usable) normals and the
	// reader computed angle-weighted vertex normals.
	ComputedNormals bool
}

func (r *Report) warnf(format string, args ...any) {
	if len(r.Warnings) < 100 {
		r.Warnings = append(r.Warnings, fmt.Sprintf(format, args...))
	}
}

// FormatError reports a malformed mesh file and where it goes wrong.
//
// Places are given as the file shows them: Line is the 1-based text line
// (PLY header, ascii PLY data, OBJ) or 0 in binary PLY data; Record is the
// 0-based index of the record within Element in PLY data (face 3 is the
// fourth face, as PLY vertex indices count from 0), or -1; Offset is the byte
// offset of that record in a binary PLY file, or -1.
type FormatError struct {
	File    string
	Line    int
	Record  int
	Offset  int64
	Element string // PLY element name or "header"; OBJ statement keyword ("f", "v")
	Msg     string
}

func (e *FormatError) Error() string {
	var b strings.Builder
	b.WriteString(e.File)
	switch {
	case e.Line > 0:
		fmt.Fprintf(&b, ": line %d", e.Line)
		if e.Element != "" {
			if e.Record >= 0 {
				fmt.Fprintf(&b, " (%s %d)", e.Element, e.Record)
			} else {
				fmt.Fprintf(&b, " (%s)", e.Element)
			}
		}
	case e.Record >= 0:
		fmt.Fprintf(&b, ": %s record %d", e.Element, e.Record)
		if e.Offset >= 0 {
			fmt.Fprintf(&b, " (byte %d)", e.Offset)
		}
	case e.Offset >= 0:
		fmt.Fprintf(&b, ": byte %d", e.Offset)
	case e.Element != "":
		fmt.Fprintf(&b, ": %s", e.Element)
	}
	b.WriteString(": ")
	b.WriteString(e.Msg)
	return b.String()
}

// UnsupportedError reports valid input that Patina does not handle.
type UnsupportedError struct {
	File string
	Line int // 0 when not tied to a line
	Msg  string
}

func (e *UnsupportedError) Error() string {
	if e.Line > 0 {
		return fmt.Sprintf("%s: line %d: unsupported: %s", e.File, e.Line, e.Msg)
	}
	return fmt.Sprintf("%s: unsupported: %s", e.File, e.Msg)
}

// Load reads a mesh file, choosing the reader by the extension (.ply or
// .obj, any case). Errors name the file.
func Load(path string) (*render.Mesh, *Report, error) {
	ext := strings.ToLower(filepath.Ext(path))
	if ext != ".ply" && ext != ".obj" {
		return nil, nil, &UnsupportedError{File: path, Msg: fmt.Sprintf("mesh file extension %q (want .ply or .obj)", filepath.Ext(path))}
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, nil, err // *PathError names the file
	}
	defer f.Close()
	size := int64(-1)
	if st, err := f.Stat(); err == nil && st.Mode().IsRegular() {
		size = st.Size()
	}
	if ext == ".ply" {
		return readPLY(f, path, size)
	}
	return readOBJ(f, path)
}

// WriteFile writes m as a binary little-endian PLY file, atomically (through
// assets/atomicfile), so a failure never leaves a partial file.
func WriteFile(path string, m *render.Mesh) error {
	return atomicfile.Write(path, 0o644, func(w io.Writer) error {
		return WritePLY(w, m, "binary_little_endian")
	})
}

// SurfaceArea is the total area of m's triangles, summed in float64.
func SurfaceArea(m *render.Mesh) float64 {
	var sum float64
	p := m.Positions
	for t := 0; t+2 < len(m.Indices); t += 3 {
		sum += triArea(p, m.Indices[t], m.Indices[t+1], m.Indices[t+2])
	}
	return sum
}

// Bounds is the axis-aligned box of all of m's vertices. An empty mesh gives
// zero vectors.
func Bounds(m *render.Mesh) (min, max [3]float64) {
	if len(m.Positions) < 3 {
		return
	}
	for k := 0; k < 3; k++ {
		min[k], max[k] = math.Inf(1), math.Inf(-1)
	}
	p := m.Positions
	for i := 0; i+2 < len(p); i += 3 {
		for k := 0; k < 3; k++ {
			v := float64(p[i+k])
			if v < min[k] {
				min[k] = v
			}
			if v > max[k] {
				max[k] = v
			}
		}
	}
	return
}

// triArea is the area of triangle (a, b, c) of the flat position array p.
func triArea(p []float32, a, b, c uint32) float64 {
	cx, cy, cz := triCross(p, a, b, c)
	return 0.5 * math.Sqrt(cx*cx+cy*cy+cz*cz)
}

// triCross is (b-a) x (c-a) in float64.
func triCross(p []float32, a, b, c uint32) (x, y, z float64) {
	ax, ay, az := float64(p[3*a]), float64(p[3*a+1]), float64(p[3*a+2])
	ux, uy, uz := float64(p[3*b])-ax, float64(p[3*b+1])-ay, float64(p[3*b+2])-az
	vx, vy, vz := float64(p[3*c])-ax, float64(p[3*c+1])-ay, float64(p[3*c+2])-az
	return uy*vz - uz*vy, uz*vx - ux*vz, ux*vy - uy*vx
}
