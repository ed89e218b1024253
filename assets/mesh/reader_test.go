package mesh

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"patina/render"
)

const fixtures = "../../testdata/mesh"

func near(a, b, tol float64) bool {
	return math.Abs(a-b) <= tol*math.Max(1, math.Max(math.Abs(a), math.Abs(b)))
}

// checkMesh asserts the render.Mesh invariants documented in render/mesh.go.
func checkMesh(t *testing.T, m *render.Mesh) {
	t.Helper()
	nv, nt := m.NumVertices(), m.NumTriangles()
	if len(m.Positions) != 3*nv || len(m.Indices) != 3*nt {
		t.Fatalf("positions %d / indices %d not multiples of 3", len(m.Positions), len(m.Indices))
	}
	if len(m.Normals) != 0 && len(m.Normals) != 3*nv {
		t.Fatalf("normals: %d values for %d vertices", len(m.Normals), nv)
	}
	if len(m.UVs) != 0 && len(m.UVs) != 2*nv {
		t.Fatalf("uvs: %d values for %d vertices", len(m.UVs), nv)
	}
	for _, i := range m.Indices {
		if int(i) >= nv {
			t.Fatalf("index %d >= %d", i, nv)
		}
	}
	if len(m.Segments) != nt {
		t.Fatalf("%d segments for %d triangles", len(m.Segments), nt)
	}
	for _, s := range m.Segments {
		if s < 0 || int(s) >= len(m.SegmentLabels) {
			t.Fatalf("segment %d out of %d labels", s, len(m.SegmentLabels))
		}
	}
	for i := 0; i+2 < len(m.Normals); i += 3 {
		l := math.Sqrt(float64(m.Normals[i]*m.Normals[i] + m.Normals[i+1]*m.Normals[i+1] + m.Normals[i+2]*m.Normals[i+2]))
		if !near(l, 1, 1e-5) {
			t.Fatalf("normal %d has length %v", i/3, l)
		}
	}
}

func load(t *testing.T, file string) (*render.Mesh, *Report) {
	t.Helper()
	m, rep, err := Load(filepath.Join(fixtures, file))
	if err != nil {
		t.Fatal(err)
	}
	checkMesh(t, m)
	return m, rep
}

// Greg Turk's description of the PLY format prints two example files: a
// cube of six quadrilaterals with vertex and face elements only, and
// "another cube" with vertex colours, seven faces (two triangles and five
// quadrilaterals) and an extra edge element. testdata/mesh/turk-cube.ply and
// turk-cube-edges.ply reproduce them (the description's {annotations}
// removed). Both describe the unit cube [0,1]^3: area 6, 12 triangles.
func TestTurkExamples(t *testing.T) {
	for _, f := range []string{"turk-cube.ply", "turk-cube-edges.ply"} {
		t.Run(f, func(t *testing.T) {
			m, rep := load(t, f)
			if m.NumVertices() != 8 || m.NumTriangles() != 12 || rep.Degenerate != 0 {
				t.Fatalf("%d vertices, %d triangles, %d degenerate; want 8, 12, 0", m.NumVertices(), m.NumTriangles(), rep.Degenerate)
			}
			if a := SurfaceArea(m); !near(a, 6, 1e-12) {
				t.Errorf("area %v, want 6", a)
			}
			lo, hi := Bounds(m)
			if lo != [3]float64{0, 0, 0} || hi != [3]float64{1, 1, 1} {
				t.Errorf("bounds %v %v", lo, hi)
			}
			if rep.Format != "ply ascii" || !rep.ComputedNormals {
				t.Errorf("report %+v", rep)
			}
			if len(m.SegmentLabels) != 1 || m.SegmentLabels[0].Label != 0 {
				t.Errorf("segments %v", m.SegmentLabels)
			}
			// Turk's faces wind counter-clockwise seen from outside: every
			// triangle's normal points away from the cube's centre.
			for tr := 0; tr < m.NumTriangles(); tr++ {
				a, b, c := m.Indices[3*tr], m.Indices[3*tr+1], m.Indices[3*tr+2]
				nx, ny, nz := triCross(m.Positions, a, b, c)
				var cx, cy, cz float64
				for _, i := range []uint32{a, b, c} {
					cx += float64(m.Positions[3*i]) - 0.5
					cy += float64(m.Positions[3*i+1]) - 0.5
					cz += float64(m.Positions[3*i+2]) - 0.5
				}
				if nx*cx+ny*cy+nz*cz <= 0 {
					t.Errorf("triangle %d faces inwards", tr)
				}
			}
			// Angle-weighted normals at a cube corner are the corner's
			// diagonal however the faces are split (Thürmer and Wüthrich
			// 1998, the property that motivates angle weighting).
			s := 1 / math.Sqrt(3)
			for i := 0; i < 8; i++ {
				for k := 0; k < 3; k++ {
					want := s
					if m.Positions[3*i+k] == 0 {
						want = -s
					}
					if !near(float64(m.Normals[3*i+k]), want, 1e-6) {
						t.Fatalf("vertex %d normal %v, want diagonal", i, m.Normals[3*i:3*i+3])
					}
				}
			}
		})
	}
}

// tetra is a test mesh of small integer coordinates so every PLY type can
// hold them: a tetrahedron's four faces plus one quadrilateral (the base
// square of a pyramid over the same points would not close; the quad lies in
// z = 0, split into two triangles).
var tetraPos = [][3]float64{{0, 0, 0}, {2, 0, 0}, {0, 2, 0}, {0, 0, 2}, {2, 2, 0}}
var tetraFaces = [][]int{{0, 2, 1}, {0, 1, 3}, {1, 2, 3}, {0, 3, 2}, {1, 2, 4}, {0, 1, 4, 2}}
var tetraSeg = []int{7, 3, 3, 7, 11, 3}

// tetraArea is the area by hand: three right triangles of legs 2 (area 2
// each), the slanted face with sides 2*sqrt(2) (equilateral: sqrt(3)/4 * 8),
// the triangle (1,2,4) of area 2 and the 2x2 square of area 4.
var tetraArea = 3*2 + math.Sqrt(3)/4*8 + 2 + 4

var allTypes = []string{"char", "int8", "uchar", "uint8", "short", "int16", "ushort", "uint16", "int", "int32", "uint", "uint32", "float", "float32", "double", "float64"}
var intTypes = []string{"char", "int8", "uchar", "uint8", "short", "int16", "ushort", "uint16", "int", "int32", "uint", "uint32"}

func tetraPLY(format, coordType, countType, indexType, skipType string, withSeg bool) []byte {
	ones := func(int) int { return 0 }
	_ = ones
	vert := tElem{name: "vertex", count: len(tetraPos), props: []tProp{
		{name: "x", typ: coordType}, {name: "confidence", typ: skipType}, {name: "y", typ: coordType},
		{name: "weights", typ: skipType, countType: countType, itemsPerRc: func(r int) int { return r % 3 }},
		{name: "z", typ: coordType},
	}}
	vert.value = func(r, p, k int) float64 {
		switch p {
		case 0:
			return tetraPos[r][0]
		case 2:
			return tetraPos[r][1]
		case 4:
			return tetraPos[r][2]
		}
		return float64(1 + k + r)
	}
	face := tElem{name: "face", count: len(tetraFaces), props: []tProp{
		{name: "flags", typ: skipType},
		{name: "vertex_indices", typ: indexType, countType: countType, itemsPerRc: func(r int) int { return len(tetraFaces[r]) }},
	}}
	if withSeg {
		face.props = append(face.props, tProp{name: "segment", typ: "int"})
	}
	face.value = func(r, p, k int) float64 {
		switch p {
		case 1:
			return float64(tetraFaces[r][k])
		case 2:
			return float64(tetraSeg[r])
		}
		return 5
	}
	material := tElem{name: "material", count: 2, props: []tProp{
		{name: "name", typ: "uchar", countType: countType, itemsPerRc: func(r int) int { return 4 + r }},
		{name: "shine", typ: skipType},
	}, value: func(r, p, k int) float64 { return float64(65 + k) }}
	edge := tElem{name: "edge", count: 3, props: []tProp{{name: "vertex1", typ: "int"}, {name: "vertex2", typ: "int"}},
		value: func(r, p, k int) float64 { return float64(r + p) }}
	return encodePLY(format, []tElem{material, vert, edge, face}, "test mesh", "every type")
}

// Turk's description lists the types char uchar short ushort int uint float
// double with the sized aliases int8 ... float64, list properties with any
// count and item type, and says readers skip elements and properties they do
// not know. Every type name appears here as coordinate type, and in turn as
// list count, index item and skipped-property type, in all three encodings.
func TestPLYEveryTypeEveryEncoding(t *testing.T) {
	for _, format := range []string{"ascii", "binary_little_endian", "binary_big_endian"} {
		for i, ct := range allTypes {
			countT := intTypes[(i+3)%len(intTypes)]
			indexT := intTypes[i%len(intTypes)]
			skipT := allTypes[(i+5)%len(allTypes)]
			name := fmt.Sprintf("%s/%s-%s-%s-%s", format, ct, countT, indexT, skipT)
			t.Run(name, func(t *testing.T) {
				data := tetraPLY(format, ct, countT, indexT, skipT, true)
				m, rep, err := ReadPLY(bytes.NewReader(data), name)
				if err != nil {
					t.Fatal(err)
				}
				checkMesh(t, m)
				if rep.Format != "ply "+format || len(rep.Warnings) != 0 {
					t.Errorf("report %+v", rep)
				}
				for v, p := range tetraPos {
					for k := 0; k < 3; k++ {
						if float64(m.Positions[3*v+k]) != p[k] {
							t.Fatalf("vertex %d = %v, want %v", v, m.Positions[3*v:3*v+3], p)
						}
					}
				}
				if m.NumTriangles() != 7 {
					t.Fatalf("%d triangles, want 7", m.NumTriangles())
				}
				if a := SurfaceArea(m); !near(a, tetraArea, 1e-6) {
					t.Errorf("area %v, want %v", a, tetraArea)
				}
				want := []int{7, 3, 3, 7, 11, 3, 3} // the quad gives two triangles
				for tr, w := range want {
					if got := m.SegmentLabels[m.Segments[tr]].Label; got != w {
						t.Fatalf("triangle %d segment %d, want %d", tr, got, w)
					}
				}
				if l := m.SegmentLabels; len(l) != 3 || l[0].Label != 3 || l[1].Label != 7 || l[2].Label != 11 {
					t.Errorf("labels %v, want sorted 3 7 11", l)
				}
			})
		}
	}
}

func TestPLYFacesBeforeVerticesAndNoSegment(t *testing.T) {
	data := []byte("ply\nformat ascii 1.0\nelement face 1\nproperty list uchar uint vertex_indices\nelement vertex 3\nproperty double x\nproperty double y\nproperty double z\nend_header\n3 0 1 2\n0 0 0\n1 0 0\n0 1 0\n")
	m, _, err := ReadPLY(bytes.NewReader(data), "t.ply")
	if err != nil {
		t.Fatal(err)
	}
	checkMesh(t, m)
	if m.NumTriangles() != 1 || SurfaceArea(m) != 0.5 {
		t.Fatalf("got %d triangles area %v", m.NumTriangles(), SurfaceArea(m))
	}
	if len(m.SegmentLabels) != 1 || m.SegmentLabels[0] != (render.SegmentLabel{Label: 0}) {
		t.Errorf("labels %v, want one with label 0", m.SegmentLabels)
	}
	if n := m.Normals[0:3]; n[0] != 0 || n[1] != 0 || n[2] != 1 {
		t.Errorf("normal %v, want +z", n)
	}
}

func TestPLYNormalsAndUVNames(t *testing.T) {
	for _, uv := range [][2]string{{"s", "t"}, {"u", "v"}, {"texture_u", "texture_v"}} {
		hdr := fmt.Sprintf("ply\nformat ascii 1.0\nelement vertex 3\nproperty float x\nproperty float y\nproperty float z\nproperty float nx\nproperty float ny\nproperty float nz\nproperty float %s\nproperty float %s\nelement face 1\nproperty list uchar int vertex_index\nend_header\n", uv[0], uv[1])
		data := hdr + "0 0 0 0 0 2 0.25 0.5\n1 0 0 0 0 2 1 0\n0 1 0 0 3 4 0 1\n3 0 1 2\n"
		m, rep, err := ReadPLY(strings.NewReader(data), "n.ply")
		if err != nil {
			t.Fatal(err)
		}
		checkMesh(t, m)
		if rep.ComputedNormals {
			t.Error("normals were computed although the file has them")
		}
		if got := m.Normals[6:9]; got[0] != 0 || !near(float64(got[1]), 0.6, 1e-7) || !near(float64(got[2]), 0.8, 1e-7) {
			t.Errorf("normal %v, want (0, 0.6, 0.8) (normalised)", got)
		}
		if m.UVs[0] != 0.25 || m.UVs[1] != 0.5 || m.UVs[5] != 1 {
			t.Errorf("%s/%s: uvs %v", uv[0], uv[1], m.UVs)
		}
	}
}

func TestDegenerateDropped(t *testing.T) {
	// Triangle 1 repeats a vertex, triangle 2 is collinear, triangle 3 is fine.
	data := "ply\nformat ascii 1.0\nelement vertex 4\nproperty float x\nproperty float y\nproperty float z\nelement face 3\nproperty list uchar int vertex_indices\nproperty uchar segment\nend_header\n0 0 0\n1 0 0\n2 0 0\n0 1 0\n3 0 1 1 4\n3 0 1 2 5\n3 0 1 3 6\n"
	m, rep, err := ReadPLY(strings.NewReader(data), "d.ply")
	if err != nil {
		t.Fatal(err)
	}
	checkMesh(t, m)
	if rep.Degenerate != 2 || m.NumTriangles() != 1 || len(rep.Warnings) != 1 {
		t.Fatalf("degenerate %d, triangles %d, warnings %v", rep.Degenerate, m.NumTriangles(), rep.Warnings)
	}
	if len(m.SegmentLabels) != 1 || m.SegmentLabels[0].Label != 6 {
		t.Errorf("labels %v: only the kept triangle's label should remain", m.SegmentLabels)
	}
}

func TestWriteReadRoundTrip(t *testing.T) {
	m := &render.Mesh{
		Positions:     []float32{0, 0, 0, 1.5, 0, 0, 0, 1e-7, 0, 3.25e6, -2, 1},
		Normals:       []float32{0, 0, 1, 0, 0, 1, 0, 0, 1, 0, 1, 0},
		UVs:           []float32{0, 0, 1, 0, 0, 1, 0.333333, 0.1},
		Indices:       []uint32{0, 1, 2, 1, 3, 2},
		Segments:      []int32{1, 0},
		SegmentLabels: []render.SegmentLabel{{Label: -1, Name: "glaze"}, {Label: -1, Name: "gold leaf"}},
	}
	for _, format := range []string{"ascii", "binary_little_endian", "binary_big_endian"} {
		var buf bytes.Buffer
		if err := WritePLY(&buf, m, format); err != nil {
			t.Fatal(err)
		}
		got, rep, err := ReadPLY(&buf, format)
		if err != nil {
			t.Fatal(err)
		}
		checkMesh(t, got)
		if rep.ComputedNormals || rep.Format != "ply "+format {
			t.Errorf("report %+v", rep)
		}
		for _, pair := range [][2][]float32{{m.Positions, got.Positions}, {m.Normals, got.Normals}, {m.UVs, got.UVs}} {
			if fmt.Sprint(pair[0]) != fmt.Sprint(pair[1]) {
				t.Errorf("%s: %v != %v", format, pair[1], pair[0])
			}
		}
		if fmt.Sprint(got.Indices) != fmt.Sprint(m.Indices) {
			t.Errorf("%s: indices %v", format, got.Indices)
		}
		// Named segments come back with their names (written as index and
		// comment line), in label order.
		for tr := range m.Segments {
			if got.SegmentLabels[got.Segments[tr]].Name != m.SegmentLabels[m.Segments[tr]].Name {
				t.Errorf("%s: triangle %d segment %v", format, tr, got.SegmentLabels[got.Segments[tr]])
			}
		}
	}
	path := filepath.Join(t.TempDir(), "out.ply")
	if err := WriteFile(path, m); err != nil {
		t.Fatal(err)
	}
	if got, _, err := Load(path); err != nil || got.NumTriangles() != 2 {
		t.Fatalf("WriteFile then Load: %v", err)
	}
}

// TestRefusedBeforeAllocation checks that a header's counts are refused
// before memory is reserved for them.
func TestRefusedBeforeAllocation(t *testing.T) {
	hdr := func(n string) string {
		return "ply\nformat binary_little_endian 1.0\nelement vertex " + n + "\nproperty float x\nproperty float y\nproperty float z\nelement face 1\nproperty list uchar int vertex_indices\nend_header\n"
	}
	cases := []struct {
		name, data string
		reader     func(string) io.Reader
		want       string
	}{
		{"4e9 vertices", hdr("4000000000"), func(s string) io.Reader { return strings.NewReader(s) }, "exceeds the limit"},
		{"30M vertices in a small file", hdr("30000000") + "abc", func(s string) io.Reader { return strings.NewReader(s) }, "only 3 bytes follow"},
		{"30M vertices on a stream", hdr("30000000") + "abc", func(s string) io.Reader { return io.MultiReader(strings.NewReader(s)) }, "the file ends inside record 0"},
	}
	for _, c := range cases {
		var before, after runtime.MemStats
		runtime.GC()
		runtime.ReadMemStats(&before)
		_, _, err := ReadPLY(c.reader(c.data), "big.ply")
		runtime.ReadMemStats(&after)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want %q", c.name, err, c.want)
		}
		var fe *FormatError
		if !errors.As(err, &fe) {
			t.Errorf("%s: %T is not a *FormatError", c.name, err)
		}
		if d := after.TotalAlloc - before.TotalAlloc; d > 4<<20 {
			t.Errorf("%s: allocated %d bytes before refusing", c.name, d)
		}
	}
}
