package mesh

import (
	"fmt"
	"math"
	"strings"
	"testing"
)

// The OBJ description's face forms v, v/vt, v//vn and v/vt/vn, negative
// indices counting back from the latest element, w on v, continuation lines,
// and the grouping statements.
func TestOBJStatements(t *testing.T) {
	src := `# a square and a triangle
mtllib studio.mtl
o thing
v 0 0 0
v 1 0 0
v 1 1 0 1.0
v 0 1 0
vt 0 0
vt 1 0
vt 1 1
vt 0 1
vn 0 0 2
f 1 2 3
usemtl glaze
f 1/1 3/3 4/4
g part
usemtl gold
s 1
f -4//-1 -3//-1 \
  -2//-1
s off
f 1/1/1 2/2/1 3/3/1
l 1 2
`
	m, rep, err := ReadOBJ(strings.NewReader(src), "s.obj")
	if err != nil {
		t.Fatal(err)
	}
	checkMesh(t, m)
	if m.NumTriangles() != 4 {
		t.Fatalf("%d triangles, want 4", m.NumTriangles())
	}
	// Segments by usemtl name; the first face precedes any usemtl.
	var names []string
	for tr := 0; tr < 4; tr++ {
		l := m.SegmentLabels[m.Segments[tr]]
		if l.Label != -1 {
			t.Errorf("OBJ label %d, want -1", l.Label)
		}
		names = append(names, l.Name)
	}
	if got := strings.Join(names, ","); got != "default,glaze,gold,gold" {
		t.Errorf("segments %s", got)
	}
	// Re-indexing: file vertices keep their index with the vt/vn of their
	// first use (v1: none, v3: none, v4: vt4); v1/vt1, v3/vt3, v1//vn1,
	// v2//vn1, v3//vn1, v1/vt1/vn1, v2/vt2/vn1, v3/vt3/vn1 are appended.
	if m.NumVertices() != 4+8 {
		t.Errorf("%d vertices, want 12", m.NumVertices())
	}
	if !rep.ComputedNormals || len(rep.Warnings) != 2 {
		t.Errorf("report %+v: want computed normals (some corners have none) and warnings for that and for l", rep)
	}
	if a := SurfaceArea(m); !near(a, 2, 1e-12) {
		t.Errorf("area %v, want 2", a)
	}
	// The continued face uses vertices 1, 2, 3 (-4, -3, -2 of four).
	i := m.Indices[6:9]
	for k, want := range [][3]float32{{0, 0, 0}, {1, 0, 0}, {1, 1, 0}} {
		if got := m.Positions[3*i[k] : 3*i[k]+3]; got[0] != want[0] || got[1] != want[1] || got[2] != want[2] {
			t.Errorf("corner %d at %v, want %v", k, got, want)
		}
	}
	// UV of the second face's corners.
	if j := m.Indices[4]; m.UVs[2*j] != 1 || m.UVs[2*j+1] != 1 {
		t.Errorf("uv %v, want (1,1)", m.UVs[2*j:2*j+2])
	}
}

func TestOBJGroupsWithoutMaterialsAndNormals(t *testing.T) {
	src := "v 0 0 0\nv 1 0 0\nv 0 1 0\nvn 0 0 1\nf 1//1 2//1 3//1\ng rim  left\nf 3//1 2//1 1//1\ng\nf 1//1 3//1 2//1\n"
	m, rep, err := ReadOBJ(strings.NewReader(src), "g.obj")
	if err != nil {
		t.Fatal(err)
	}
	checkMesh(t, m)
	if rep.ComputedNormals {
		t.Error("normals computed although every corner has one")
	}
	var names []string
	for _, l := range m.SegmentLabels {
		names = append(names, l.Name)
	}
	if got := strings.Join(names, ","); got != "default,rim left" {
		t.Errorf("segments %s, want default,rim left (a bare g is the default group)", got)
	}
	if m.Segments[2] != 0 {
		t.Errorf("third face in segment %d", m.Segments[2])
	}
}

// shoelace is Gauss's area formula for a simple polygon in the plane.
func shoelace(p [][2]float64) float64 {
	var s float64
	for i := range p {
		j := (i + 1) % len(p)
		s += p[i][0]*p[j][1] - p[j][0]*p[i][1]
	}
	return s / 2
}

func insidePolygon(p [][2]float64, x, y float64) bool {
	in := false
	for i, j := 0, len(p)-1; i < len(p); j, i = i, i+1 {
		if (p[i][1] > y) != (p[j][1] > y) && x < (p[j][0]-p[i][0])*(y-p[i][1])/(p[j][1]-p[i][1])+p[i][0] {
			in = !in
		}
	}
	return in
}

// Non-convex polygons, placed in a tilted plane, must be cut into triangles
// that lie inside the polygon, keep its winding, and sum to its area by
// Gauss's shoelace formula.
func TestEarClippingNonConvex(t *testing.T) {
	polys := map[string][][2]float64{
		"L":     {{0, 0}, {3, 0}, {3, 1}, {1, 1}, {1, 3}, {0, 3}},
		"comb":  {{0, 0}, {6, 0}, {6, 3}, {5, 3}, {5, 1}, {4, 1}, {4, 3}, {3, 3}, {3, 1}, {2, 1}, {2, 3}, {1, 3}, {1, 1}, {0, 1}},
		"star":  nil,
		"arrow": {{0, 0}, {4, 2}, {0, 4}, {1, 2}},
	}
	var star [][2]float64
	for k := 0; k < 10; k++ {
		r := 1.0
		if k%2 == 1 {
			r = 0.4
		}
		a := 2 * math.Pi * float64(k) / 10
		star = append(star, [2]float64{r * math.Cos(a), r * math.Sin(a)})
	}
	polys["star"] = star
	// A rotation that tilts the plane so no axis is dominant by accident.
	ca, sa, cb, sb := math.Cos(0.7), math.Sin(0.7), math.Cos(-1.1), math.Sin(-1.1)
	place := func(x, y float64) [3]float64 {
		p := [3]float64{x, y * ca, y * sa}
		return [3]float64{p[0]*cb - p[2]*sb, p[1], p[0]*sb + p[2]*cb}
	}
	for name, poly := range polys {
		for _, reverse := range []bool{false, true} {
			p := append([][2]float64(nil), poly...)
			if reverse {
				for i, j := 0, len(p)-1; i < j; i, j = i+1, j-1 {
					p[i], p[j] = p[j], p[i]
				}
			}
			var b strings.Builder
			for _, q := range p {
				v := place(q[0], q[1])
				fmt.Fprintf(&b, "v %.17g %.17g %.17g\n", v[0], v[1], v[2])
			}
			b.WriteString("f")
			for i := range p {
				fmt.Fprintf(&b, " %d", i+1)
			}
			b.WriteString("\n")
			m, rep, err := ReadOBJ(strings.NewReader(b.String()), name+".obj")
			if err != nil {
				t.Fatal(err)
			}
			if m.NumTriangles() != len(p)-2 || rep.Degenerate != 0 {
				t.Fatalf("%s: %d triangles (%d degenerate), want %d", name, m.NumTriangles(), rep.Degenerate, len(p)-2)
			}
			want := math.Abs(shoelace(p))
			if a := SurfaceArea(m); !near(a, want, 1e-5) {
				t.Errorf("%s reverse=%v: area %v, shoelace area %v", name, reverse, a, want)
			}
			sign := math.Copysign(1, shoelace(p))
			for tr := 0; tr < m.NumTriangles(); tr++ {
				var tri [3][2]float64
				for k := 0; k < 3; k++ {
					tri[k] = p[m.Indices[3*tr+k]]
				}
				area := shoelace(tri[:])
				if area*sign <= 0 {
					t.Errorf("%s: triangle %d winds against the polygon", name, tr)
				}
				cx, cy := (tri[0][0]+tri[1][0]+tri[2][0])/3, (tri[0][1]+tri[1][1]+tri[2][1])/3
				if !insidePolygon(p, cx, cy) {
					t.Errorf("%s: triangle %d lies outside the polygon", name, tr)
				}
			}
		}
	}
}

// testdata/mesh/plaque.obj: an L-shaped hexagon (area 3*1 + 1*2 = 5 by the
// shoelace formula) in front of a 3 x 3 square written with negative
// indices across a continuation line.
func TestPlaqueFixture(t *testing.T) {
	m, rep := load(t, "plaque.obj")
	if m.NumTriangles() != 6 || m.NumVertices() != 10 || rep.ComputedNormals || rep.Degenerate != 0 {
		t.Fatalf("%d triangles %d vertices, report %+v", m.NumTriangles(), m.NumVertices(), rep)
	}
	if a := SurfaceArea(m); !near(a, 14, 1e-12) {
		t.Errorf("area %v, want 5 + 9", a)
	}
	if l := m.SegmentLabels; len(l) != 2 || l[0].Name != "glaze" || l[1].Name != "gilding" {
		t.Errorf("segments %v", l)
	}
	if n := m.Normals[3*8 : 3*8+3]; n[2] != -1 {
		t.Errorf("back normal %v", n)
	}
	lo, hi := Bounds(m)
	if lo != [3]float64{0, 0, -0.5} || hi != [3]float64{3, 3, 0} {
		t.Errorf("bounds %v %v", lo, hi)
	}
}
