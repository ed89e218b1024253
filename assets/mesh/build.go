package mesh

import (
	"math"
	"slices"
	"sort"

	"patina/render"
)

// room makes room for n more elements, doubling the capacity when it runs
// out: append grows large slices by only about 1.25x, which would copy a
// big mesh several times over while it is read.
func room[T any](s []T, n int) []T {
	if cap(s)-len(s) >= n {
		return s
	}
	return slices.Grow(s, max(n, cap(s), 1024))
}

// faceSet collects the faces a reader parsed, before triangulation, so that
// PLY files whose faces come before their vertices work and so that a file
// of triangles only is never copied.
type faceSet struct {
	corners []uint32 // every face's vertex indices, one face after another
	lens    []uint16 // corners per face; nil while every face is a triangle
	keys    []int32  // segment key per face (reader-specific), or nil
	nfaces  int
	ntris   int // triangles the faces will give
}

// add appends one face of n >= 3 corners (already in corners' tail: the
// caller appended them) with its segment key.
func (fs *faceSet) added(n int, key int32, withKeys bool) {
	if n != 3 && fs.lens == nil {
		fs.lens = make([]uint16, fs.nfaces, max(fs.nfaces+1, cap(fs.corners)/3))
		for i := range fs.lens {
			fs.lens[i] = 3
		}
	}
	if fs.lens != nil {
		fs.lens = append(room(fs.lens, 1), uint16(n))
	}
	if withKeys {
		fs.keys = append(room(fs.keys, 1), key)
	}
	fs.nfaces++
	fs.ntris += n - 2
}

// triangulate turns the faces into triangles over positions pos, drops the
// degenerate ones and returns the triangle indices and per-triangle keys
// (nil when the faces had none).
func (fs *faceSet) triangulate(pos []float32, rep *Report) ([]uint32, []int32) {
	var tris []uint32
	var keys []int32
	if fs.lens == nil {
		tris, keys = fs.corners, fs.keys
	} else {
		tris = make([]uint32, 0, 3*fs.ntris)
		if fs.keys != nil {
			keys = make([]int32, 0, fs.ntris)
		}
		var ec earClipper
		at := 0
		for f, n16 := range fs.lens {
			n := int(n16)
			poly := fs.corners[at : at+n]
			at += n
			before := len(tris)
			if n == 3 {
				tris = append(tris, poly...)
			} else {
				tris = ec.triangulate(pos, poly, tris)
			}
			if keys != nil {
				for k := (len(tris) - before) / 3; k > 0; k-- {
					keys = append(keys, fs.keys[f])
				}
			}
		}
	}
	// Drop degenerate triangles in place.
	w := 0
	for t := 0; t+2 < len(tris); t += 3 {
		a, b, c := tris[t], tris[t+1], tris[t+2]
		if a == b || b == c || a == c {
			continue
		}
		if x, y, z := triCross(pos, a, b, c); x == 0 && y == 0 && z == 0 {
			continue
		}
		tris[w], tris[w+1], tris[w+2] = a, b, c
		if keys != nil {
			keys[w/3] = keys[t/3]
		}
		w += 3
	}
	if d := (len(tris) - w) / 3; d > 0 {
		rep.Degenerate = d
		rep.warnf("dropped %d degenerate triangle(s) (repeated vertex or zero area)", d)
	}
	tris = tris[:w]
	if keys != nil {
		keys = keys[:w/3]
	}
	return tris, keys
}

// earClipper triangulates simple polygons by ear clipping after projecting
// them onto the plane of their Newell normal (Newell's method: M. E. Newell,
// as given in Sutherland, Sproull, Schumacker, "A characterization of ten
// hidden-surface algorithms", 1974; ear clipping: Meisters, "Polygons have
// ears", 1975). Its scratch space is reused between polygons.
type earClipper struct {
	u, v       []float64
	prev, next []int
}

func (ec *earClipper) triangulate(pos []float32, poly []uint32, out []uint32) []uint32 {
	n := len(poly)
	// Newell normal.
	var nx, ny, nz float64
	for i := 0; i < n; i++ {
		a, b := poly[i], poly[(i+1)%n]
		ax, ay, az := float64(pos[3*a]), float64(pos[3*a+1]), float64(pos[3*a+2])
		bx, by, bz := float64(pos[3*b]), float64(pos[3*b+1]), float64(pos[3*b+2])
		nx += (ay - by) * (az + bz)
		ny += (az - bz) * (ax + bx)
		nz += (ax - bx) * (ay + by)
	}
	// Project by dropping the dominant axis; keep the polygon counter-
	// clockwise in 2D so a convex corner has a positive cross product.
	k := 2
	if math.Abs(nx) >= math.Abs(ny) && math.Abs(nx) >= math.Abs(nz) {
		k = 0
	} else if math.Abs(ny) >= math.Abs(nz) {
		k = 1
	}
	nk := [3]float64{nx, ny, nz}[k]
	if nk == 0 || math.IsNaN(nk) {
		// No plane (all corners collinear or coincident): a fan; its
		// triangles have zero area and are dropped as degenerate.
		for i := 1; i+1 < n; i++ {
			out = append(out, poly[0], poly[i], poly[i+1])
		}
		return out
	}
	i0, i1 := (k+1)%3, (k+2)%3
	if nk < 0 {
		i0, i1 = i1, i0
	}
	ec.u, ec.v = ec.u[:0], ec.v[:0]
	ec.prev, ec.next = ec.prev[:0], ec.next[:0]
	for i, p := range poly {
		ec.u = append(ec.u, float64(pos[3*p+uint32(i0)]))
		ec.v = append(ec.v, float64(pos[3*p+uint32(i1)]))
		ec.prev = append(ec.prev, (i+n-1)%n)
		ec.next = append(ec.next, (i+1)%n)
	}
	u, v, prev, next := ec.u, ec.v, ec.prev, ec.next
	cross := func(a, b, c int) float64 {
		return (u[b]-u[a])*(v[c]-v[a]) - (v[b]-v[a])*(u[c]-u[a])
	}
	isEar := func(i int) bool {
		a, c := prev[i], next[i]
		for j := next[c]; j != a; j = next[j] {
			if (u[j] == u[a] && v[j] == v[a]) || (u[j] == u[i] && v[j] == v[i]) || (u[j] == u[c] && v[j] == v[c]) {
				continue // a coincident corner (bridged hole) does not block the ear
			}
			if cross(a, i, j) >= 0 && cross(i, c, j) >= 0 && cross(c, a, j) >= 0 {
				return false
			}
		}
		return true
	}
	remaining := n
	i := 0
	for remaining > 3 {
		// One pass round the ring looking for a strictly convex ear; a
		// flat corner is taken only if there is none, and if there is no
		// candidate at all (a self-intersecting polygon) the current
		// corner is cut anyway so the loop always ends.
		flat := -1
		found := -1
		for tries := 0; tries < remaining; tries++ {
			c := cross(prev[i], i, next[i])
			if c > 0 && isEar(i) {
				found = i
				break
			}
			if c == 0 && flat < 0 {
				flat = i
			}
			i = next[i]
		}
		if found < 0 {
			found = flat
			if found < 0 {
				found = i
			}
		}
		a, c := prev[found], next[found]
		out = append(out, poly[a], poly[found], poly[c])
		next[a], prev[c] = c, a
		remaining--
		i = c
	}
	a := prev[i]
	out = append(out, poly[a], poly[i], poly[next[i]])
	return out
}

// vertexNormals computes unit angle-weighted vertex normals (Thürmer and
// Wüthrich 1998): each triangle adds its unit normal times its interior
// angle at the vertex. Vertices no triangle uses get +Z.
func vertexNormals(pos []float32, tris []uint32) []float32 {
	nv := len(pos) / 3
	acc := make([]float64, 3*nv)
	for t := 0; t+2 < len(tris); t += 3 {
		a, b, c := tris[t], tris[t+1], tris[t+2]
		ax, ay, az := float64(pos[3*a]), float64(pos[3*a+1]), float64(pos[3*a+2])
		bx, by, bz := float64(pos[3*b]), float64(pos[3*b+1]), float64(pos[3*b+2])
		cx, cy, cz := float64(pos[3*c]), float64(pos[3*c+1]), float64(pos[3*c+2])
		ux, uy, uz := bx-ax, by-ay, bz-az // a -> b
		vx, vy, vz := cx-ax, cy-ay, cz-az // a -> c
		wx, wy, wz := cx-bx, cy-by, cz-bz // b -> c
		nx, ny, nz := uy*vz-uz*vy, uz*vx-ux*vz, ux*vy-uy*vx
		l := math.Sqrt(nx*nx + ny*ny + nz*nz)
		if l == 0 || math.IsInf(l, 0) {
			continue
		}
		// |cross| is twice the area at every corner, so each angle is
		// atan2(l, dot of its two edges); the third is pi minus the others.
		angA := math.Atan2(l, ux*vx+uy*vy+uz*vz)
		angB := math.Atan2(l, -(ux*wx + uy*wy + uz*wz))
		angC := max(0, math.Pi-angA-angB)
		nx, ny, nz = nx/l, ny/l, nz/l
		acc[3*a] += angA * nx
		acc[3*a+1] += angA * ny
		acc[3*a+2] += angA * nz
		acc[3*b] += angB * nx
		acc[3*b+1] += angB * ny
		acc[3*b+2] += angB * nz
		acc[3*c] += angC * nx
		acc[3*c+1] += angC * ny
		acc[3*c+2] += angC * nz
	}
	out := make([]float32, 3*nv)
	for i := 0; i < nv; i++ {
		x, y, z := acc[3*i], acc[3*i+1], acc[3*i+2]
		l := math.Sqrt(x*x + y*y + z*z)
		if l == 0 || math.IsInf(l, 0) || math.IsNaN(l) {
			out[3*i+2] = 1
			continue
		}
		out[3*i], out[3*i+1], out[3*i+2] = float32(x/l), float32(y/l), float32(z/l)
	}
	return out
}

// labelSegments turns per-triangle PLY "segment" values into Segments and
// SegmentLabels sorted by ascending label. keys nil means one segment,
// label 0.
func labelSegments(m *render.Mesh, keys []int32, names map[int32]string) {
	nt := m.NumTriangles()
	m.Segments = make([]int32, nt)
	if keys == nil {
		m.SegmentLabels = []render.SegmentLabel{{Label: 0}}
		return
	}
	seen := map[int32]int32{}
	var labels []int32
	last, lastSet := int32(0), false
	for _, k := range keys {
		if lastSet && k == last {
			continue
		}
		if _, ok := seen[k]; !ok {
			seen[k] = 0
			labels = append(labels, k)
		}
		last, lastSet = k, true
	}
	sort.Slice(labels, func(i, j int) bool { return labels[i] < labels[j] })
	for i, l := range labels {
		seen[l] = int32(i)
		m.SegmentLabels = append(m.SegmentLabels, render.SegmentLabel{Label: int(l), Name: names[l]})
	}
	lastSet = false
	var lastIdx int32
	for t, k := range keys {
		if !lastSet || k != last {
			last, lastIdx, lastSet = k, seen[k], true
		}
		m.Segments[t] = lastIdx
	}
	if len(m.SegmentLabels) == 0 {
		m.SegmentLabels = []render.SegmentLabel{{Label: 0}}
	}
}

// nameSegments turns per-triangle indices into names (OBJ) into Segments
// and SegmentLabels in order of first appearance, Label -1.
func nameSegments(m *render.Mesh, keys []int32, names []string) {
	m.Segments = make([]int32, len(keys))
	remap := make([]int32, len(names))
	for i := range remap {
		remap[i] = -1
	}
	for t, k := range keys {
		if remap[k] < 0 {
			remap[k] = int32(len(m.SegmentLabels))
			m.SegmentLabels = append(m.SegmentLabels, render.SegmentLabel{Label: -1, Name: names[k]})
		}
		m.Segments[t] = remap[k]
	}
	if len(m.SegmentLabels) == 0 {
		m.SegmentLabels = []render.SegmentLabel{{Label: -1, Name: "default"}}
	}
}
