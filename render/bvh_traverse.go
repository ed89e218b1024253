package render

import "math"

// Hit describes the closest intersection of a ray with a scene.
type Hit struct {
	T      float64 // distance along the ray (the ray's direction is unit)
	Tri    int32   // mesh triangle index
	B1, B2 float64 // barycentric coordinates of the triangle's vertices 1 and 2
	P      Vec3    // hit point O + T D
	Ng     Vec3    // unit geometric normal, (v1-v0) x (v2-v0) as wound; not turned to face the ray
	Ns     Vec3    // unit interpolated shading normal; Ng when the mesh has no normals
	UV     [2]float64
	// Segment is the triangle's segment (an index into the mesh's
	// SegmentLabels), or 0 when the mesh has no segments.
	Segment int32
}

// stackSize bounds the depth of the binary tree the build makes
// (depth <= medianDepth + log2(MaxSceneTriangles) < stackSize).
const stackSize = 64

type stackEntry struct {
	node int32  // as bvh4Node.child
	t    uint32 // entry distance of the node's box as float32 bits, for culling on pop
}

// boxPad widens the far slab distances so the float32 box test never
// rejects a box the ray touches: 1 + 2 gamma(3) with gamma(n) =
// n u / (1 - n u), u = 2^-24 (Ize, "Robust BVH ray traversal", JCGT 2(2),
// 2013, section 3.3; the float32 counterpart of its double-precision bound).
var boxPad = float32(1 + 2*(3*0x1p-24)/(1-3*0x1p-24))

// rayQuery holds a ray prepared for traversal: float32 origin and
// reciprocal direction for the box tests, and the shear of the watertight
// triangle test (Woop, Benthin, Wald, "Watertight ray/triangle
// intersection", JCGT 2(1), 2013, section 3).
type rayQuery struct {
	ox, oy, oz    float32 // origin, rounded to float32; the triangle test uses the same point
	idx, idy, idz float32 // reciprocal direction, clamped to finite values
	octant        uint    // signs of the direction: bit 0 x < 0, bit 1 y < 0, bit 2 z < 0
	// Woop et al.: kz is the dominant axis of D, kx and ky the other two
	// (swapped when D[kz] < 0 to keep the winding); S shears D onto +z.
	kx, ky, kz    uint
	sx, sy, sz    float64
	okx, oky, okz float64 // origin permuted by (kx, ky, kz)
	tmax          float64 // current upper bound (exclusive)
	tmax32        float32 // tmax rounded up to float32, for box culling
	// closest hit so far
	hitIndex int32 // index into Scene.tris, -1 if none
	u, v, w  float64
}

// init prepares the query and reports whether the ray can hit anything.
func (q *rayQuery) init(r Ray, tmax float64) bool {
	d := r.D
	if !(tmax > 0) || math.IsNaN(d.X+d.Y+d.Z) || math.IsInf(d.X+d.Y+d.Z, 0) ||
		math.IsNaN(r.O.X+r.O.Y+r.O.Z) || math.IsInf(r.O.X+r.O.Y+r.O.Z, 0) {
		return false
	}
	ax, ay, az := math.Abs(d.X), math.Abs(d.Y), math.Abs(d.Z)
	var kz uint
	switch {
	case ax >= ay && ax >= az:
		kz = 0
	case ay >= az:
		kz = 1
	default:
		kz = 2
	}
	dk := [3]float64{d.X, d.Y, d.Z}
	if dk[kz] == 0 {
		return false // zero direction
	}
	kx := (kz + 1) % 3
	ky := (kx + 1) % 3
	if dk[kz] < 0 {
		kx, ky = ky, kx
	}
	q.kx, q.ky, q.kz = kx, ky, kz
	q.sx = dk[kx] / dk[kz]
	q.sy = dk[ky] / dk[kz]
	q.sz = 1 / dk[kz]
	q.ox, q.oy, q.oz = float32(r.O.X), float32(r.O.Y), float32(r.O.Z)
	o := [3]float64{float64(q.ox), float64(q.oy), float64(q.oz)}
	q.okx, q.oky, q.okz = o[kx], o[ky], o[kz]
	q.idx, q.idy, q.idz = recip32(d.X), recip32(d.Y), recip32(d.Z)
	q.octant = 0
	if q.idx < 0 {
		q.octant |= 1
	}
	if q.idy < 0 {
		q.octant |= 2
	}
	if q.idz < 0 {
		q.octant |= 4
	}
	q.hitIndex = -1
	q.setTmax(tmax)
	return true
}

// recip32 returns 1/d in float32, clamped to +-1e30 so that a zero
// component gives no 0*Inf NaN in the slab test (a ray in a slab's plane
// then counts as inside it, the conservative answer).
func recip32(d float64) float32 {
	r := 1 / d // +-Inf for +-0
	return float32(min(max(r, -1e30), 1e30))
}

func (q *rayQuery) setTmax(t float64) {
	q.tmax = t
	t32 := float32(t)
	if float64(t32) < t {
		t32 = math.Nextafter32(t32, float32(math.Inf(1)))
	}
	q.tmax32 = t32
}

// Intersect finds the closest intersection of r with the scene at a
// distance in (0, tmax) and stores it in h. It reports whether there is
// one; on a miss h is left unchanged. It does not allocate.
func (s *Scene) Intersect(r Ray, tmax float64, h *Hit) bool {
	var q rayQuery
	if !q.init(r, tmax) {
		return false
	}
	s.traverse(&q, false)
	if q.hitIndex < 0 {
		return false
	}
	s.fillHit(r, &q, h)
	return true
}

// ClosestHit is the bare closest-hit query: distance, mesh triangle and the
// barycentrics of its vertices 1 and 2, without touching the mesh (no
// normals, UVs or segment), like the single-ray query of other ray-tracing
// kernels. It does not allocate.
func (s *Scene) ClosestHit(r Ray, tmax float64) (t float64, tri int32, b1, b2 float64, ok bool) {
	var q rayQuery
	if !q.init(r, tmax) {
		return 0, -1, 0, 0, false
	}
	s.traverse(&q, false)
	if q.hitIndex < 0 {
		return 0, -1, 0, 0, false
	}
	return q.tmax, s.triID[q.hitIndex], q.v, q.w, true
}

// Occluded reports whether r hits any triangle at a distance in (0, tmax),
// for shadow rays. It does not allocate.
func (s *Scene) Occluded(r Ray, tmax float64) bool {
	var q rayQuery
	if !q.init(r, tmax) {
		return false
	}
	return s.traverse(&q, true)
}

// traverse walks the 4-wide BVH front to back: the children a node's ray
// enters are sorted by entry distance, the nearest is visited next and the
// others are pushed on a fixed stack with their entry distances; popped
// entries farther than the current closest hit are skipped. Leaves'
// triangles are tested in the same loop (a call would spill every
// register). With anyHit it returns at the first hit. The loop is
// generated once per direction octant (bvh_gen.go, bvh_octants.go), so that
// the near and far planes of the boxes are constant offsets.
//
// The slab test (Ize 2013) compares distances as the int32 bit patterns of
// their float32 values. Both ends are clamped to the ray's interval, the
// entry distance below by 0 and the exit distance above by tmax > 0, and on
// that range the bit patterns order as the values do, every negative value
// (-0 included) ordering below 0. Integer min and max compile to
// conditional moves, where Go's float32 min (NaN- and signed-zero-exact)
// takes three dependent instructions.
func (s *Scene) traverse(q *rayQuery, anyHit bool) bool {
	return s.traverseLoops(q, anyHit)
}

//go:generate go run bvh_gen.go

// f32bits returns the bit pattern of f as an int32, which orders as f does
// for non-negative values and puts every negative value below them.
func f32bits(f float32) int32 { return int32(math.Float32bits(f)) }

// fillHit completes h from the query's closest hit.
func (s *Scene) fillHit(r Ray, q *rayQuery, h *Hit) {
	m := s.mesh
	tri := s.triID[q.hitIndex]
	h.T = q.tmax
	h.Tri = tri
	h.B1, h.B2 = q.v, q.w
	h.P = r.At(q.tmax)
	tv := &s.tris[q.hitIndex] // the mesh's vertices, already in cache
	p0 := Vec3{float64(tv[0]), float64(tv[1]), float64(tv[2])}
	p1 := Vec3{float64(tv[3]), float64(tv[4]), float64(tv[5])}
	p2 := Vec3{float64(tv[6]), float64(tv[7]), float64(tv[8])}
	ng := p1.Sub(p0).Cross(p2.Sub(p0)).Norm()
	h.Ng = ng
	b0 := q.u
	h.Ns = ng
	if len(m.Normals) == 0 && len(m.UVs) == 0 && len(m.Segments) == 0 {
		h.UV, h.Segment = [2]float64{}, 0
		return
	}
	ix := m.Indices[3*int(tri) : 3*int(tri)+3 : 3*int(tri)+3]
	if len(m.Normals) != 0 {
		n := vertex64(m.Normals, ix[0]).Mul(b0).
			Add(vertex64(m.Normals, ix[1]).Mul(q.v)).
			Add(vertex64(m.Normals, ix[2]).Mul(q.w))
		if l := n.Len(); l > 0 {
			h.Ns = n.Mul(1 / l)
		}
	}
	h.UV = [2]float64{}
	if len(m.UVs) != 0 {
		uv := m.UVs
		for c := 0; c < 2; c++ {
			h.UV[c] = float64(uv[2*ix[0]+uint32(c)])*b0 + float64(uv[2*ix[1]+uint32(c)])*q.v +
				float64(uv[2*ix[2]+uint32(c)])*q.w
		}
	}
	h.Segment = 0
	if len(m.Segments) != 0 {
		h.Segment = m.Segments[tri]
	}
}

func vertex64(p []float32, i uint32) Vec3 {
	v := p[3*i : 3*i+3 : 3*i+3]
	return Vec3{float64(v[0]), float64(v[1]), float64(v[2])}
}
