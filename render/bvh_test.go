package render

import (
	"errors"
	"flag"
	"math"
	"math/rand/v2"
	"reflect"
	"testing"
)

// bruteRays sets the number of random rays per mesh of the brute-force
// cross-check; the default keeps `go test` short on a small machine, and
// -bvh.rays=1000000 runs the full check.
var bruteRays = flag.Int("bvh.rays", 0, "rays per mesh for the BVH brute-force cross-check (0: 30000 per 1000 triangles or fewer, a tenth with -short)")

func bruteCount() int {
	if *bruteRays > 0 {
		return *bruteRays
	}
	if testing.Short() {
		return 3000
	}
	return 30000
}

// testRays makes a mix of rays for mesh m: random rays in and around the
// bounds, rays aimed exactly at vertices and at points on edges, axis-
// parallel rays through vertices, and rays starting on the surface.
func testRays(m *Mesh, n int, seed uint64) ([]Ray, []float64) {
	rng := rand.New(rand.NewPCG(seed, 99))
	b := EmptyAABB()
	for i := 0; i < m.NumVertices(); i++ {
		b = b.Extend(meshVertex(m, uint32(i)))
	}
	size := b.Size()
	c := b.Centre()
	randIn := func(scale float64) Vec3 {
		return Vec3{
			c.X + scale*size.X*(rng.Float64()-0.5),
			c.Y + scale*size.Y*(rng.Float64()-0.5),
			c.Z + scale*size.Z*(rng.Float64()-0.5),
		}
	}
	nt := m.NumTriangles()
	rays := make([]Ray, 0, n)
	tmax := make([]float64, 0, n)
	for len(rays) < n {
		var r Ray
		tm := math.Inf(1)
		t := rng.IntN(nt)
		p0, p1, p2 := triVertices(m, t)
		switch len(rays) % 6 {
		case 0: // random
			r = Ray{randIn(1.3), randomDir(rng)}
			if rng.IntN(3) == 0 {
				tm = rng.Float64() * size.Len()
			}
		case 1: // exactly at a vertex
			o := randIn(1.5)
			r = Ray{o, p0.Sub(o).Norm()}
		case 2: // at a point of an edge (its midpoint or a random one)
			s := 0.5
			if rng.IntN(2) == 0 {
				s = rng.Float64()
			}
			q := p1.Add(p2.Sub(p1).Mul(s))
			o := randIn(1.5)
			r = Ray{o, q.Sub(o).Norm()}
		case 3: // axis-parallel through a vertex (direction components exactly 0)
			axis := rng.IntN(3)
			d := [3]float64{}
			d[axis] = 1 - 2*float64(rng.IntN(2))
			dv := Vec3{d[0], d[1], d[2]}
			r = Ray{p0.Sub(dv.Mul(2 * size.Len())), dv}
		case 4: // starting on the surface
			u, v := rng.Float64(), rng.Float64()
			if u+v > 1 {
				u, v = 1-u, 1-v
			}
			o := p0.Add(p1.Sub(p0).Mul(u)).Add(p2.Sub(p0).Mul(v))
			r = Ray{o, randomDir(rng)}
		default: // from inside the bounds towards a random surface point
			u, v := rng.Float64(), rng.Float64()
			if u+v > 1 {
				u, v = 1-u, 1-v
			}
			q := p0.Add(p1.Sub(p0).Mul(u)).Add(p2.Sub(p0).Mul(v))
			o := randIn(0.5)
			r = Ray{o, q.Sub(o).Norm()}
		}
		if r.D.Len2() == 0 || math.IsNaN(r.D.X) {
			continue
		}
		rays = append(rays, r)
		tmax = append(tmax, tm)
	}
	return rays, tmax
}

// TestBVHAgainstBruteForce checks closest hit and any hit against testing
// every triangle (brute force, the definition of the query) on several
// meshes: identical hit/miss decisions and distances to 1e-5 relative.
func TestBVHAgainstBruteForce(t *testing.T) {
	type namedMesh struct {
		name string
		m    func(testing.TB) *Mesh
	}
	meshes := []namedMesh{
		{"displaced sphere", func(testing.TB) *Mesh { return displacedSphere(16) }},
		{"cube", func(testing.TB) *Mesh { return cubeMesh() }},
		{"triangle soup", func(testing.TB) *Mesh { return triangleSoup(3000, 5) }},
		{"bunny", bunnyMesh},
	}
	for i, nm := range meshes {
		t.Run(nm.name, func(t *testing.T) {
			m := nm.m(t)
			s, err := NewScene(m, 2)
			if err != nil {
				t.Fatal(err)
			}
			n := bruteCount()
			if *bruteRays == 0 && m.NumTriangles() > 1000 {
				n = n * 1000 / m.NumTriangles() // brute force costs O(triangles) per ray
			}
			rays, tmax := testRays(m, n, uint64(i+1))
			hits := 0
			for k, r := range rays {
				var h Hit
				got := s.Intersect(r, tmax[k], &h)
				bt, _, want := bruteIntersect(s, r, tmax[k])
				if got != want {
					t.Fatalf("ray %d %+v tmax %v: BVH hit %v, brute force %v", k, r, tmax[k], got, want)
				}
				if got {
					hits++
					if math.Abs(h.T-bt) > 1e-5*bt {
						t.Fatalf("ray %d: BVH t %v, brute force %v", k, h.T, bt)
					}
				}
				if occ := s.Occluded(r, tmax[k]); occ != want {
					t.Fatalf("ray %d: Occluded %v, brute force %v", k, occ, want)
				}
			}
			t.Logf("%d triangles, %d rays, %d hits; %+v", m.NumTriangles(), len(rays), hits, s.BuildStats())
			if hits == 0 || hits == len(rays) {
				t.Fatalf("degenerate ray set: %d hits of %d", hits, len(rays))
			}
		})
	}
}

// TestWatertight: every ray from inside a closed mesh leaves it, so it must
// hit the surface (Jordan-Brouwer separation theorem); rays are aimed
// exactly at vertices and edge midpoints, where a non-watertight test lets
// rays slip between triangles.
func TestWatertight(t *testing.T) {
	for _, tc := range []struct {
		name   string
		m      *Mesh
		inside func(rng *rand.Rand) Vec3
	}{
		{"displaced sphere", displacedSphere(40), func(rng *rand.Rand) Vec3 {
			return randomDir(rng).Mul(0.5 * rng.Float64())
		}},
		{"cube", cubeMesh(), func(rng *rand.Rand) Vec3 {
			if rng.IntN(4) == 0 {
				return Vec3{} // the centre: rays to vertices and edges are exact diagonals
			}
			return Vec3{rng.Float64()*1.8 - 0.9, rng.Float64()*1.8 - 0.9, rng.Float64()*1.8 - 0.9}
		}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			s, err := NewScene(tc.m, 0)
			if err != nil {
				t.Fatal(err)
			}
			rng := rand.New(rand.NewPCG(3, 4))
			n := 100000
			if testing.Short() {
				n = 10000
			}
			m := tc.m
			misses := 0
			for k := 0; k < n; k++ {
				o := tc.inside(rng)
				tri := rng.IntN(m.NumTriangles())
				p0, p1, p2 := triVertices(m, tri)
				var target Vec3
				switch k % 3 {
				case 0:
					target = p0
				case 1:
					target = p0.Add(p1).Mul(0.5)
				default:
					target = p1.Add(p2).Mul(0.5)
				}
				r := Ray{o, target.Sub(o).Norm()}
				var h Hit
				if !s.Intersect(r, math.Inf(1), &h) || !s.Occluded(r, math.Inf(1)) {
					misses++
					if misses < 5 {
						t.Errorf("ray %+v from inside slipped through", r)
					}
				}
			}
			if misses > 0 {
				t.Fatalf("%d of %d rays from inside missed the closed surface", misses, n)
			}
		})
	}
}

// TestHitAgainstMollerTrumbore checks distance and barycentrics of the
// watertight test against the independent float64 test of Möller and
// Trumbore (JGT 2(1), 1997) on rays aimed well inside triangles.
func TestHitAgainstMollerTrumbore(t *testing.T) {
	m := bunnyMesh(t)
	s, err := NewScene(m, 0)
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(11, 12))
	checked := 0
	for k := 0; k < 5000; k++ {
		tri := rng.IntN(m.NumTriangles())
		p0, p1, p2 := triVertices(m, tri)
		u, v := 0.1+0.35*rng.Float64(), 0.1+0.35*rng.Float64()
		q := p0.Add(p1.Sub(p0).Mul(u)).Add(p2.Sub(p0).Mul(v))
		o := q.Add(randomDir(rng).Mul(0.5 + rng.Float64()))
		o = Vec3{float64(float32(o.X)), float64(float32(o.Y)), float64(float32(o.Z))} // the scene's origin precision
		r := Ray{o, q.Sub(o).Norm()}
		var h Hit
		if !s.Intersect(r, math.Inf(1), &h) {
			t.Fatalf("ray %d aimed inside triangle %d missed", k, tri)
		}
		a0, a1, a2 := triVertices(m, int(h.Tri))
		mt, b1, b2, ok := mollerTrumbore(r, a0, a1, a2)
		if !ok {
			t.Fatalf("ray %d: Möller-Trumbore misses the reported triangle %d", k, h.Tri)
		}
		if math.Abs(mt-h.T) > 1e-9*mt || math.Abs(b1-h.B1) > 1e-7 || math.Abs(b2-h.B2) > 1e-7 {
			t.Fatalf("ray %d: t %v b %v %v; Möller-Trumbore t %v b %v %v", k, h.T, h.B1, h.B2, mt, b1, b2)
		}
		if h.Tri == int32(tri) {
			checked++
			if math.Abs(b1-u) > 1e-6 || math.Abs(b2-v) > 1e-6 {
				t.Fatalf("ray %d: barycentrics %v %v, aimed at %v %v", k, b1, b2, u, v)
			}
		}
		// P lies at O + t D; Ng is the unit normal of the triangle as wound.
		if h.P.Sub(r.At(h.T)).Len() > 1e-12 {
			t.Fatal("P is not O + T D")
		}
		ng := a1.Sub(a0).Cross(a2.Sub(a0)).Norm()
		if h.Ng.Sub(ng).Len() > 1e-12 || h.Ns != h.Ng {
			t.Fatalf("ray %d: Ng %v, want %v; Ns %v", k, h.Ng, ng, h.Ns)
		}
	}
	if checked < 4000 {
		t.Fatalf("only %d rays hit the triangle they were aimed at", checked)
	}
}

// TestHitAttributes: shading normals, UVs and segments are interpolated
// from the mesh with the hit's barycentrics. UVs are set to the vertex x and
// y, a linear function, which barycentric interpolation reproduces exactly.
func TestHitAttributes(t *testing.T) {
	m := displacedSphere(12)
	nv := m.NumVertices()
	m.Normals = make([]float32, 3*nv)
	m.UVs = make([]float32, 2*nv)
	for i := 0; i < nv; i++ {
		p := meshVertex(m, uint32(i)).Norm()
		m.Normals[3*i], m.Normals[3*i+1], m.Normals[3*i+2] = float32(p.X), float32(p.Y), float32(p.Z)
		m.UVs[2*i], m.UVs[2*i+1] = m.Positions[3*i], m.Positions[3*i+1]
	}
	s, err := NewScene(m, 1)
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(1, 1))
	for k := 0; k < 2000; k++ {
		r := Ray{randomDir(rng).Mul(3), Vec3{}}
		r.D = randomDir(rng).Mul(0.3).Sub(r.O).Norm()
		var h Hit
		if !s.Intersect(r, math.Inf(1), &h) {
			t.Fatal("ray towards the centre missed")
		}
		if math.Abs(h.UV[0]-h.P.X) > 1e-6 || math.Abs(h.UV[1]-h.P.Y) > 1e-6 {
			t.Fatalf("UV %v at P %v", h.UV, h.P)
		}
		if math.Abs(h.Ns.Len()-1) > 1e-12 || h.Ns.Dot(h.P.Norm()) < 0.98 {
			t.Fatalf("Ns %v at P %v", h.Ns, h.P)
		}
		if h.Segment != int32(h.Tri%3) {
			t.Fatalf("segment %d of triangle %d", h.Segment, h.Tri)
		}
	}
}

// TestBuildDeterministic: the hierarchy does not depend on the thread count.
func TestBuildDeterministic(t *testing.T) {
	m := displacedSphere(60)
	ref, err := NewScene(m, 1)
	if err != nil {
		t.Fatal(err)
	}
	for _, th := range []int{2, 3, 8} {
		s, err := NewScene(m, th)
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(s.nodes, ref.nodes) || !reflect.DeepEqual(s.vec, ref.vec) || !reflect.DeepEqual(s.triID, ref.triID) {
			t.Fatalf("threads %d: a different hierarchy than with 1 thread", th)
		}
	}
	st := ref.BuildStats()
	// A w-wide tree over L leaves has between (L-1)/(w-1) and L-1 nodes.
	width, need := 4, 0
	if ref.nodes != nil {
		need = stackNeed(ref.nodes, 0)
	} else {
		width = 8
	}
	if st.Triangles != m.NumTriangles() || st.Leaves < st.Triangles/maxLeafSize || st.Depth >= stackSize ||
		st.Nodes < (st.Leaves-1)/(width-1) || st.Nodes > st.Leaves-1 || need > wideStackSize {
		t.Fatalf("implausible stats %+v (%d-wide)", st, width)
	}
}

// TestDegenerateInputs: meshes that defeat the SAH (all triangles at one
// point, identical triangles) still build a hierarchy within the stack
// depth and answer queries.
func TestDegenerateInputs(t *testing.T) {
	m := &Mesh{}
	for i := 0; i < 5000; i++ {
		m.Positions = append(m.Positions, 0, 0, 0, 1, 0, 0, 0, 1, 0)
		m.Indices = append(m.Indices, uint32(3*i), uint32(3*i+1), uint32(3*i+2))
	}
	s, err := NewScene(m, 2)
	if err != nil {
		t.Fatal(err)
	}
	if d := s.BuildStats().Depth; d >= stackSize {
		t.Fatalf("depth %d", d)
	}
	var h Hit
	if !s.Intersect(Ray{Vec3{0.25, 0.25, 1}, Vec3{0, 0, -1}}, math.Inf(1), &h) || math.Abs(h.T-1) > 1e-12 {
		t.Fatalf("hit %+v", h)
	}
	// Empty and one-triangle meshes.
	e, err := NewScene(&Mesh{}, 0)
	if err != nil {
		t.Fatal(err)
	}
	if e.Intersect(Ray{Vec3{}, Vec3{0, 0, 1}}, math.Inf(1), &h) || e.Occluded(Ray{Vec3{}, Vec3{0, 0, 1}}, 1) || !e.Bounds().IsEmpty() {
		t.Fatal("empty scene hit")
	}
	one := &Mesh{Positions: []float32{0, 0, 0, 1, 0, 0, 0, 1, 0}, Indices: []uint32{0, 1, 2}}
	o, err := NewScene(one, 0)
	if err != nil {
		t.Fatal(err)
	}
	if !o.Intersect(Ray{Vec3{0.2, 0.2, -1}, Vec3{0, 0, 1}}, math.Inf(1), &h) || h.T != 1 || h.Tri != 0 {
		t.Fatalf("one triangle: %+v", h)
	}
	if o.Intersect(Ray{Vec3{0.2, 0.2, -1}, Vec3{0, 0, 1}}, 1, &h) {
		t.Fatal("hit at t = tmax counted (the interval is open)")
	}
	if o.Intersect(Ray{Vec3{0.2, 0.2, 0}, Vec3{0, 0, 1}}, math.Inf(1), &h) {
		t.Fatal("hit at t = 0 counted (the interval is open)")
	}
	for _, bad := range []Ray{{Vec3{}, Vec3{}}, {Vec3{math.NaN(), 0, 0}, Vec3{0, 0, 1}}, {Vec3{}, Vec3{math.Inf(1), 0, 0}}} {
		if o.Intersect(bad, math.Inf(1), &h) || o.Occluded(bad, math.Inf(1)) {
			t.Fatalf("invalid ray %+v hit", bad)
		}
	}
}

func TestNewSceneRejectsBadMeshes(t *testing.T) {
	for _, tc := range []struct {
		name string
		m    *Mesh
		elem string
		idx  int
	}{
		{"index out of range", &Mesh{Positions: []float32{0, 0, 0, 1, 0, 0, 0, 1, 0}, Indices: []uint32{0, 1, 2, 0, 1, 3}}, "face", 1},
		{"NaN vertex", &Mesh{Positions: []float32{0, 0, 0, 1, float32(math.NaN()), 0, 0, 1, 0}, Indices: []uint32{0, 1, 2}}, "vertex", 1},
		{"ragged indices", &Mesh{Positions: []float32{0, 0, 0}, Indices: []uint32{0, 0}}, "", 0},
		{"segments", &Mesh{Positions: []float32{0, 0, 0, 1, 0, 0, 0, 1, 0}, Indices: []uint32{0, 1, 2}, Segments: []int32{0, 0}}, "", 0},
	} {
		_, err := NewScene(tc.m, 1)
		var me *MeshError
		if !errors.As(err, &me) || me.Element != tc.elem || me.Index != tc.idx {
			t.Errorf("%s: error %v", tc.name, err)
		}
	}
	if _, err := NewScene(nil, 1); err == nil {
		t.Error("nil mesh accepted")
	}
}

// TestLevelCollapse: the fallback collapse (whole levels only, for trees too
// deep for the greedy one's stack) answers queries as brute force does.
func TestLevelCollapse(t *testing.T) {
	defer fourWide()()
	m := triangleSoup(2000, 11)
	greedy, err := NewScene(m, 1)
	if err != nil {
		t.Fatal(err)
	}
	levelCollapseOnly = true
	s, err := NewScene(m, 1)
	levelCollapseOnly = false
	if err != nil {
		t.Fatal(err)
	}
	if reflect.DeepEqual(s.nodes, greedy.nodes) {
		t.Fatal("the fallback collapse made the greedy tree")
	}
	if need := stackNeed(s.nodes, 0); need > wideStackSize {
		t.Fatalf("stack need %d", need)
	}
	rays, tmax := testRays(m, 3000, 7)
	for k, r := range rays {
		var h Hit
		got := s.Intersect(r, tmax[k], &h)
		bt, _, want := bruteIntersect(s, r, tmax[k])
		if got != want || (got && math.Abs(h.T-bt) > 1e-5*bt) {
			t.Fatalf("ray %d: BVH %v %v, brute force %v %v", k, got, h.T, want, bt)
		}
		if occ := s.Occluded(r, tmax[k]); occ != want {
			t.Fatalf("ray %d: Occluded %v, brute force %v", k, occ, want)
		}
	}
}

// TestNextUp32 checks the padding step against the standard library's
// math.Nextafter32 towards +Inf.
func TestNextUp32(t *testing.T) {
	for _, x := range []float32{0, float32(math.Copysign(0, -1)), 1, -1, 1e-45, -1e-45, 3.4e38, -3.4e38, 0.1, -0.1, 1.17549435e-38, -1.17549435e-38} {
		if got, want := nextUp32(x), math.Nextafter32(x, float32(math.Inf(1))); math.Float32bits(got) != math.Float32bits(want) && !(got == 0 && want == 0) {
			t.Errorf("nextUp32(%g) = %g, want %g", x, got, want)
		}
	}
}
