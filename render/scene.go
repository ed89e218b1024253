package render

import (
	"errors"
	"fmt"
	"math"
	"runtime"
	"sync"
	"time"
)

// MaxSceneTriangles is the largest mesh NewScene accepts: a leaf reference
// packs the first triangle and the count in an int32.
const MaxSceneTriangles = 1 << (31 - leafCountBits)

// Scene is a triangle mesh with its bounding volume hierarchy, ready for
// ray queries. It keeps a pointer to the mesh (for normals, UVs and
// segments) and a float32 copy of the vertices in leaf order; the mesh must
// not change while the scene is in use. A Scene is safe for concurrent
// queries.
type Scene struct {
	mesh   *Mesh
	nodes  []bvh4Node  // the 4-wide hierarchy, root first (nil when vec holds the tree)
	vec    vectorNodes // the vector build's 8-wide hierarchy (bvh_simd.go); empty otherwise
	tris   []triVerts  // vertices of each triangle in leaf order
	triID  []int32     // mesh triangle index of each entry of tris
	bounds AABB
	stats  BuildStats
}

// BuildStats describes a built hierarchy.
type BuildStats struct {
	Triangles int     // triangles in the scene
	Nodes     int     // inner nodes of the traversed hierarchy: 4-wide, or 8-wide in the vector build (TraversalPath)
	Leaves    int     // leaves
	Depth     int     // longest root-to-leaf path of the binary SAH tree, in edges (the 4-wide one is about half as deep)
	Seconds   float64 // wall-clock build time
	Threads   int     // goroutines the build ran on
}

// bvhNode is an inner node of the binary tree the SAH build makes, holding
// the boxes of both children; collapseBVH turns the tree into the 4-wide
// one that queries traverse.
type bvhNode struct {
	box   [12]float32 // child 0 min x y z, max x y z; then child 1
	child [2]int32    // >= 0: inner node index; < 0: leaf ^(first triangle << leafCountBits | count)
	_     [2]int32    // pads the node to one 64-byte cache line
}

// triVerts holds the three vertices of a triangle: x0 y0 z0 x1 y1 z1 x2 y2 z2.
type triVerts [9]float32

// MeshError reports a mesh that cannot be turned into a scene.
type MeshError struct {
	Element string // "vertex" or "face", or "" for the mesh as a whole
	Index   int
	Reason  string
}

func (e *MeshError) Error() string {
	if e.Element == "" {
		return "render: mesh: " + e.Reason
	}
	return fmt.Sprintf("render: mesh: %s %d: %s", e.Element, e.Index, e.Reason)
}

// NewScene builds the BVH over m with the binned SAH on up to threads
// cores (threads <= 0: every core). The hierarchy, and so every
// query result, is the same for any thread count.
func NewScene(m *Mesh, threads int) (*Scene, error) {
	if m == nil {
		return nil, errors.New("render: NewScene: nil mesh")
	}
	if err := checkSceneMesh(m); err != nil {
		return nil, err
	}
	if threads <= 0 {
		threads = runtime.GOMAXPROCS(0)
	}
	start := time.Now()
	nt := m.NumTriangles()
	s := &Scene{mesh: m}
	refs := make([]primRef, nt)
	adviseHugePages(refs)
	cb, all := parallelRefs(m, refs, threads)
	bd := &builder{refs: refs, threads: threads, packed: packedLeaves()}
	if threads > 1 {
		// When the build may use every core, subtrees get more goroutines
		// than cores: the scheduler then keeps all cores busy when sibling
		// subtrees differ in size or another process takes a core.
		extra := threads - 1
		if threads >= runtime.GOMAXPROCS(0) {
			extra = 8*threads - 1
		}
		bd.sem = make(chan struct{}, extra)
	}
	nslots := max(nt, 1)
	bd.nodes = make([]bvhNode, nslots)
	adviseHugePages(bd.nodes)
	ref, cnt, st := bd.build(0, nt, cb, 0, 0, new(buildScratch))
	if ref < 0 {
		// The whole mesh is one leaf (or empty): wrap it in a root whose
		// second child is an empty box that no ray can enter.
		nd := &bd.nodes[0]
		b := emptyBox32()
		for i := range refs {
			b.extendBox(&refs[i].lo, &refs[i].hi)
		}
		nd.setChild(0, b, ref, cnt)
		nd.setChild(1, emptyBox32(), -1, 0)
		st.inner = 1
		st.depth = 1
		st.leaves = 1
	}
	s.tris = make([]triVerts, nt)
	adviseHugePages(s.tris)
	s.triID = make([]int32, nt)
	parallelFor(nt, threads, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			id := refs[i].id
			s.triID[i] = id
			ix := m.Indices[3*int(id) : 3*int(id)+3 : 3*int(id)+3]
			t := &s.tris[i]
			for v := 0; v < 3; v++ {
				p := m.Positions[3*ix[v] : 3*ix[v]+3 : 3*ix[v]+3]
				t[3*v], t[3*v+1], t[3*v+2] = p[0], p[1], p[2]
			}
		}
	})
	nn := s.collapse(bd.nodes, threads)
	s.bounds = EmptyAABB()
	if nt > 0 {
		s.bounds = AABB{
			Vec3{float64(all.lo[0]), float64(all.lo[1]), float64(all.lo[2])},
			Vec3{float64(all.hi[0]), float64(all.hi[1]), float64(all.hi[2])},
		}
	}
	s.stats = BuildStats{
		Triangles: nt, Nodes: nn, Leaves: st.leaves, Depth: st.depth,
		Seconds: time.Since(start).Seconds(), Threads: threads,
	}
	return s, nil
}

// Mesh returns the mesh the scene was built from.
func (s *Scene) Mesh() *Mesh { return s.mesh }

// Bounds returns the bounding box of all triangles (empty for an empty mesh).
func (s *Scene) Bounds() AABB { return s.bounds }

// BuildStats returns figures of the hierarchy and its build.
func (s *Scene) BuildStats() BuildStats { return s.stats }

func checkSceneMesh(m *Mesh) error {
	if len(m.Positions)%3 != 0 {
		return &MeshError{Reason: fmt.Sprintf("%d position values is not a multiple of 3", len(m.Positions))}
	}
	if len(m.Indices)%3 != 0 {
		return &MeshError{Reason: fmt.Sprintf("%d indices is not a multiple of 3", len(m.Indices))}
	}
	nv, nt := m.NumVertices(), m.NumTriangles()
	if nt > MaxSceneTriangles {
		return &MeshError{Reason: fmt.Sprintf("%d triangles exceed the limit of %d", nt, MaxSceneTriangles)}
	}
	if len(m.Normals) != 0 && len(m.Normals) != len(m.Positions) {
		return &MeshError{Reason: fmt.Sprintf("%d normal values for %d vertices", len(m.Normals), nv)}
	}
	if len(m.UVs) != 0 && len(m.UVs) != 2*nv {
		return &MeshError{Reason: fmt.Sprintf("%d UV values for %d vertices", len(m.UVs), nv)}
	}
	if len(m.Segments) != 0 && len(m.Segments) != nt {
		return &MeshError{Reason: fmt.Sprintf("%d segment values for %d triangles", len(m.Segments), nt)}
	}
	for i, p := range m.Positions {
		if math.IsNaN(float64(p)) || math.IsInf(float64(p), 0) {
			return &MeshError{Element: "vertex", Index: i / 3, Reason: "coordinate is not finite"}
		}
	}
	for i, ix := range m.Indices {
		if int64(ix) >= int64(nv) {
			return &MeshError{Element: "face", Index: i / 3, Reason: fmt.Sprintf("vertex index %d out of range (%d vertices)", ix, nv)}
		}
	}
	return nil
}

// parallelRefs fills one build reference per triangle and returns the
// bounds of their doubled centroids and of the triangles.
func parallelRefs(m *Mesh, refs []primRef, threads int) (box32, box32) {
	parts := max(1, min(threads, len(refs)/4096))
	boxes := make([]box32, parts)
	bounds := make([]box32, parts)
	var wg sync.WaitGroup
	for p := 0; p < parts; p++ {
		lo, hi := len(refs)*p/parts, len(refs)*(p+1)/parts
		wg.Add(1)
		go func() {
			defer wg.Done()
			cb, bb := emptyBox32(), emptyBox32()
			pos, idx := m.Positions, m.Indices
			for t := lo; t < hi; t++ {
				ix := idx[3*t : 3*t+3 : 3*t+3]
				a := pos[3*ix[0] : 3*ix[0]+3 : 3*ix[0]+3]
				b := pos[3*ix[1] : 3*ix[1]+3 : 3*ix[1]+3]
				c := pos[3*ix[2] : 3*ix[2]+3 : 3*ix[2]+3]
				r := &refs[t]
				r.id = int32(t)
				r.lo = [3]float32{min(a[0], b[0], c[0]), min(a[1], b[1], c[1]), min(a[2], b[2], c[2])}
				r.hi = [3]float32{max(a[0], b[0], c[0]), max(a[1], b[1], c[1]), max(a[2], b[2], c[2])}
				cb.extendPoint(r.lo[0]+r.hi[0], r.lo[1]+r.hi[1], r.lo[2]+r.hi[2])
				bb = union32(bb, box32{r.lo, r.hi})
			}
			boxes[p], bounds[p] = cb, bb
		}()
	}
	wg.Wait()
	cb, bb := emptyBox32(), emptyBox32()
	for i := range boxes {
		cb = union32(cb, boxes[i])
		bb = union32(bb, bounds[i])
	}
	return cb, bb
}

// parallelFor runs body over [0, n) split into contiguous chunks.
func parallelFor(n, threads int, body func(lo, hi int)) {
	parts := max(1, min(threads, n/8192))
	if parts == 1 {
		body(0, n)
		return
	}
	var wg sync.WaitGroup
	for p := 0; p < parts; p++ {
		lo, hi := n*p/parts, n*(p+1)/parts
		wg.Add(1)
		go func() {
			defer wg.Done()
			body(lo, hi)
		}()
	}
	wg.Wait()
}
