package render

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"patina/render/refcheck"
)

// displacedSphere builds the mesh of the Embree side-by-side harness
// (shared/bench/embree/raybench.c, function gen): a cube-mapped sphere of
// 12*n*n triangles with the same displacement, vertex order and winding, so
// that n = 289 gives the harness's 1,002,252 triangles. It is closed: the
// six faces share no vertices but their border vertices coincide exactly
// (each is computed from the same cube point).
func displacedSphere(n int) *Mesh {
	disp := func(x, y, z float32) float32 {
		s := func(v float32) float32 { return float32(math.Sin(float64(v))) }
		c := func(v float32) float32 { return float32(math.Cos(float64(v))) }
		return 0.08*s(5*x+1.3)*s(4*y+0.7)*s(6*z) +
			0.04*s(13*x+17*y)*c(11*z+2) +
			0.02*s(31*y+29*z)*s(37*x)
	}
	point := func(face int, a, b float32) [3]float32 {
		var x, y, z float32
		switch face {
		case 0:
			x, y, z = 1, a, b
		case 1:
			x, y, z = -1, b, a
		case 2:
			x, y, z = b, 1, a
		case 3:
			x, y, z = a, -1, b
		case 4:
			x, y, z = a, b, 1
		default:
			x, y, z = b, a, -1
		}
		l := float32(math.Sqrt(float64(x*x + y*y + z*z)))
		x, y, z = x/l, y/l, z/l
		r := 1 + disp(x, y, z)
		return [3]float32{r * x, r * y, r * z}
	}
	m := &Mesh{}
	for f := 0; f < 6; f++ {
		base := uint32(len(m.Positions) / 3)
		for j := 0; j <= n; j++ {
			for i := 0; i <= n; i++ {
				p := point(f, -1+2*float32(i)/float32(n), -1+2*float32(j)/float32(n))
				m.Positions = append(m.Positions, p[:]...)
			}
		}
		for j := 0; j < n; j++ {
			for i := 0; i < n; i++ {
				a := base + uint32(j*(n+1)+i)
				b, c := a+1, a+uint32(n)+1
				d := c + 1
				m.Indices = append(m.Indices, a, b, d, a, d, c)
			}
		}
	}
	m.Segments = make([]int32, m.NumTriangles())
	for t := range m.Segments {
		m.Segments[t] = int32(t % 3)
	}
	m.SegmentLabels = []SegmentLabel{{Label: 0}, {Label: 1}, {Label: 2}}
	return m
}

// cubeMesh is the closed cube [-1,1]^3 as 12 triangles wound outwards.
func cubeMesh() *Mesh {
	m := &Mesh{}
	for i := 0; i < 8; i++ {
		m.Positions = append(m.Positions, float32(2*(i&1)-1), float32(2*(i>>1&1)-1), float32(2*(i>>2&1)-1))
	}
	quads := [][4]uint32{{0, 2, 3, 1}, {4, 5, 7, 6}, {0, 1, 5, 4}, {2, 6, 7, 3}, {0, 4, 6, 2}, {1, 3, 7, 5}}
	for _, q := range quads {
		m.Indices = append(m.Indices, q[0], q[1], q[2], q[0], q[2], q[3])
	}
	m.Segments = make([]int32, 12)
	return m
}

// triangleSoup is n random triangles of mixed sizes in [-1,1]^3, with some
// sliver and zero-area triangles, overlapping freely.
func triangleSoup(n int, seed uint64) *Mesh {
	rng := rand.New(rand.NewPCG(seed, 7))
	m := &Mesh{}
	for t := 0; t < n; t++ {
		c := [3]float64{2*rng.Float64() - 1, 2*rng.Float64() - 1, 2*rng.Float64() - 1}
		size := math.Pow(10, -3*rng.Float64())
		for v := 0; v < 3; v++ {
			for k := 0; k < 3; k++ {
				p := c[k] + size*(2*rng.Float64()-1)
				if t%17 == 0 && v == 2 { // zero-area: vertex 2 repeats vertex 1
					p = float64(m.Positions[len(m.Positions)-3])
				}
				m.Positions = append(m.Positions, float32(p))
			}
			m.Indices = append(m.Indices, uint32(3*t+v))
		}
	}
	m.Segments = make([]int32, n)
	return m
}

// bunnyMesh loads the Stanford bunny from the npm package bunny (positions
// and cells as JavaScript arrays), installed by `make deps`.
func bunnyMesh(t testing.TB) *Mesh {
	t.Helper()
	dir := refcheck.NodeModule(t, "bunny")
	src, err := os.ReadFile(filepath.Join(dir, "index.js"))
	if err != nil {
		t.Fatal(err)
	}
	text := string(src)
	i, j := strings.Index(text, "exports.positions="), strings.Index(text, "exports.cells=")
	if i < 0 || j < 0 {
		t.Fatal("bunny/index.js: exports.positions or exports.cells not found")
	}
	trim := func(s string) string { return strings.TrimRight(strings.TrimSpace(s), ";") }
	var pos [][3]float64
	var cells [][3]uint32
	if err := json.Unmarshal([]byte(trim(text[i+len("exports.positions="):j])), &pos); err != nil {
		t.Fatal("bunny positions: ", err)
	}
	if err := json.Unmarshal([]byte(trim(text[j+len("exports.cells="):])), &cells); err != nil {
		t.Fatal("bunny cells: ", err)
	}
	m := &Mesh{}
	for _, p := range pos {
		m.Positions = append(m.Positions, float32(p[0]), float32(p[1]), float32(p[2]))
	}
	for _, c := range cells {
		m.Indices = append(m.Indices, c[0], c[1], c[2])
	}
	m.Segments = make([]int32, len(cells))
	return m
}

// leaf is the traversal's triangle test as one function, for the
// brute-force reference (the generated octant loops of bvh_octants.go
// inline the same code): it tests the triangles tris[first:first+count]
// with the watertight test of Woop, Benthin and Wald (JCGT 2(1), 2013), in
// float64 on the float32 vertices. Two triangles sharing an edge compute that edge's function from
// the same transformed vertices and get exactly opposite values, so a ray
// through the edge hits at least one of them.
func (q *rayQuery) leaf(tris []triVerts, first, count int32, anyHit bool) bool {
	ts := tris[first : first+count]
	kx, ky, kz := q.kx, q.ky, q.kz
	if kx > 2 || ky > 2 || kz > 2 {
		return false // never: lets the compiler drop the bounds checks below
	}
	sx, sy, sz := q.sx, q.sy, q.sz
	okx, oky, okz := q.okx, q.oky, q.okz
	found := false
	for i := range ts {
		t := &ts[i]
		// Vertices relative to the origin, permuted, then sheared (eq. 2-4).
		az := float64(t[kz]) - okz
		bz := float64(t[3+kz]) - okz
		cz := float64(t[6+kz]) - okz
		ax := float64(t[kx]) - okx - sx*az
		ay := float64(t[ky]) - oky - sy*az
		bx := float64(t[3+kx]) - okx - sx*bz
		by := float64(t[3+ky]) - oky - sy*bz
		cx := float64(t[6+kx]) - okx - sx*cz
		cy := float64(t[6+ky]) - oky - sy*cz
		// Scaled barycentrics: 2D edge functions (eq. 5).
		u := cx*by - cy*bx
		v := ax*cy - ay*cx
		w := bx*ay - by*ax
		if min(u, v, w) < 0 && max(u, v, w) > 0 {
			continue
		}
		det := u + v + w
		if det == 0 {
			continue
		}
		tt := (u*az + v*bz + w*cz) * sz / det
		if !(tt > 0 && tt < q.tmax) {
			continue
		}
		if anyHit {
			return true
		}
		found = true
		q.hitIndex = first + int32(i)
		q.u, q.v, q.w = u/det, v/det, w/det
		q.setTmax(tt)
	}
	return found
}

// bruteIntersect tests every triangle with the same watertight test.
func bruteIntersect(s *Scene, r Ray, tmax float64) (t float64, tri int32, ok bool) {
	var q rayQuery
	if !q.init(r, tmax) {
		return 0, -1, false
	}
	all := s.tris
	for first := 0; first < len(all); first += 1024 {
		n := min(1024, len(all)-first)
		q.leaf(all, int32(first), int32(n), false)
	}
	if q.hitIndex < 0 {
		return 0, -1, false
	}
	return q.tmax, s.triID[q.hitIndex], true
}

// mollerTrumbore is an independent ray-triangle test in float64: Möller and
// Trumbore, "Fast, minimum storage ray-triangle intersection", Journal of
// Graphics Tools 2(1), 1997. It returns t and the barycentrics of vertices
// 1 and 2.
func mollerTrumbore(r Ray, p0, p1, p2 Vec3) (t, b1, b2 float64, ok bool) {
	e1, e2 := p1.Sub(p0), p2.Sub(p0)
	pv := r.D.Cross(e2)
	det := e1.Dot(pv)
	if det == 0 {
		return 0, 0, 0, false
	}
	inv := 1 / det
	tv := r.O.Sub(p0)
	b1 = tv.Dot(pv) * inv
	if b1 < 0 || b1 > 1 {
		return 0, 0, 0, false
	}
	qv := tv.Cross(e1)
	b2 = r.D.Dot(qv) * inv
	if b2 < 0 || b1+b2 > 1 {
		return 0, 0, 0, false
	}
	return e2.Dot(qv) * inv, b1, b2, true
}

func randomDir(rng *rand.Rand) Vec3 {
	z := 1 - 2*rng.Float64()
	ph := 2 * math.Pi * rng.Float64()
	s := math.Sqrt(math.Max(0, 1-z*z))
	return Vec3{s * math.Cos(ph), s * math.Sin(ph), z}
}

func meshVertex(m *Mesh, i uint32) Vec3 { return vertex64(m.Positions, i) }

func triVertices(m *Mesh, t int) (Vec3, Vec3, Vec3) {
	return meshVertex(m, m.Indices[3*t]), meshVertex(m, m.Indices[3*t+1]), meshVertex(m, m.Indices[3*t+2])
}
