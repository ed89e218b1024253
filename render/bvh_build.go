package render

import (
	"math"
	"sync"
)

// The BVH is built top-down with the binned surface-area heuristic of
// Wald, "On fast construction of SAH-based bounding volume hierarchies",
// IEEE Symposium on Interactive Ray Tracing 2007: primitives are binned by
// centroid along each axis, the SAH cost is swept over the bin boundaries,
// and the range is partitioned in place. Large ranges bin in parallel;
// subtrees below a split are built in parallel. The result does not depend
// on the number of threads: merging bins (min, max, counts) is exact and
// order-free, and node numbering is fixed afterwards by a depth-first pass.

const (
	// maxLeafSize bounds the triangles of one leaf.
	maxLeafSize = 8
	// sahTraversal and sahIntersect are the SAH costs of visiting a node
	// and of testing a triangle (relative units).
	sahTraversal = 1.0
	sahIntersect = 1.0
	// medianDepth is the depth from which every split is an object-median
	// split, so that no input can make the tree deeper than the fixed
	// traversal stack: depth <= medianDepth + log2(triangles) < stackSize.
	medianDepth = 64
	// parallelBinning is the range size from which binning is split over
	// threads; parallelSubtree the size from which a subtree gets its own
	// goroutine.
	parallelBinning = 1 << 16
	parallelSubtree = 1 << 12
	maxBins         = 32
)

// primRef is one triangle during the build: its bounds and index.
type primRef struct {
	lo [3]float32
	id int32
	hi [3]float32
	_  int32
}

type bin struct {
	lo, hi [3]float32
	n      int32
}

type binSet [3][maxBins]bin

func (bs *binSet) reset(nb int) {
	inf := float32(math.Inf(1))
	for a := range bs {
		for k := 0; k < nb && k < maxBins; k++ {
			bs[a][k] = bin{lo: [3]float32{inf, inf, inf}, hi: [3]float32{-inf, -inf, -inf}}
		}
	}
}

// box32 is a float32 box; centroid boxes hold doubled centroids (lo+hi).
type box32 struct{ lo, hi [3]float32 }

func emptyBox32() box32 {
	inf := float32(math.Inf(1))
	return box32{[3]float32{inf, inf, inf}, [3]float32{-inf, -inf, -inf}}
}

func (b *box32) extendBox(lo, hi *[3]float32) {
	b.lo[0] = min(b.lo[0], lo[0])
	b.lo[1] = min(b.lo[1], lo[1])
	b.lo[2] = min(b.lo[2], lo[2])
	b.hi[0] = max(b.hi[0], hi[0])
	b.hi[1] = max(b.hi[1], hi[1])
	b.hi[2] = max(b.hi[2], hi[2])
}

func (b *box32) extendPoint(x, y, z float32) {
	b.lo[0] = min(b.lo[0], x)
	b.lo[1] = min(b.lo[1], y)
	b.lo[2] = min(b.lo[2], z)
	b.hi[0] = max(b.hi[0], x)
	b.hi[1] = max(b.hi[1], y)
	b.hi[2] = max(b.hi[2], z)
}

func (b *box32) area() float64 {
	dx := float64(b.hi[0]) - float64(b.lo[0])
	dy := float64(b.hi[1]) - float64(b.lo[1])
	dz := float64(b.hi[2]) - float64(b.lo[2])
	if !(dx >= 0 && dy >= 0 && dz >= 0) {
		return 0
	}
	return 2 * (dx*dy + dy*dz + dz*dx)
}

// binMap maps a doubled centroid coordinate to a bin; partition uses the
// same function as binning so that both agree bit for bit.
type binMap struct {
	lo    [3]float32
	scale [3]float32
	nb    int32
}

func newBinMap(cb box32, nb int) binMap {
	m := binMap{lo: cb.lo, nb: int32(nb)}
	for a := 0; a < 3; a++ {
		ext := cb.hi[a] - cb.lo[a]
		if ext > 0 {
			m.scale[a] = float32(float64(nb) * (1 - 1e-6) / float64(ext))
		}
	}
	return m
}

func (m *binMap) bin(c float32, a int) int32 {
	k := int32((c - m.lo[a]) * m.scale[a])
	if k >= m.nb {
		k = m.nb - 1
	}
	if k < 0 {
		k = 0
	}
	return k
}

// binRefs adds refs to bs (which must have been reset).
func binRefs(refs []primRef, m *binMap, bs *binSet) {
	lx, ly, lz := m.lo[0], m.lo[1], m.lo[2]
	sx, sy, sz := m.scale[0], m.scale[1], m.scale[2]
	last := m.nb - 1
	for i := range refs {
		r := &refs[i]
		kx := min(max(int32((r.lo[0]+r.hi[0]-lx)*sx), 0), last)
		ky := min(max(int32((r.lo[1]+r.hi[1]-ly)*sy), 0), last)
		kz := min(max(int32((r.lo[2]+r.hi[2]-lz)*sz), 0), last)
		addBin(&bs[0][kx&(maxBins-1)], r)
		addBin(&bs[1][ky&(maxBins-1)], r)
		addBin(&bs[2][kz&(maxBins-1)], r)
	}
}

func addBin(b *bin, r *primRef) {
	b.n++
	b.lo[0] = min(b.lo[0], r.lo[0])
	b.lo[1] = min(b.lo[1], r.lo[1])
	b.lo[2] = min(b.lo[2], r.lo[2])
	b.hi[0] = max(b.hi[0], r.hi[0])
	b.hi[1] = max(b.hi[1], r.hi[1])
	b.hi[2] = max(b.hi[2], r.hi[2])
}

type builder struct {
	refs    []primRef
	nodes   []bvhNode // indexed by the range-derived base; compacted afterwards
	threads int
	sem     chan struct{}
}

// subtreeStats are gathered bottom-up so that goroutines share nothing.
type subtreeStats struct {
	inner, leaves, depth int
}

func (s *subtreeStats) add(o subtreeStats) {
	s.inner += o.inner
	s.leaves += o.leaves
	s.depth = max(s.depth, o.depth)
}

// build builds refs[lo:hi] (bounds b, doubled-centroid bounds cb). It returns
// the child reference for the parent: an inner node index (stored at base)
// or a leaf (^lo, with count hi-lo).
func (bd *builder) build(lo, hi int, cb box32, base int, depth int) (ref int32, count int32, st subtreeStats) {
	n := hi - lo
	st.depth = depth
	if n <= 1 {
		st.leaves = 1
		return ^int32(lo), int32(n), st
	}
	refs := bd.refs[lo:hi]
	var nodeBox box32 = emptyBox32()
	mid := -1
	var lbox, rbox, lcb, rcb box32
	if depth < medianDepth {
		nb := 8
		if n >= 1024 {
			nb = 32
		} else if n >= 128 {
			nb = 16
		}
		m := newBinMap(cb, nb)
		var bs binSet
		bd.binParallel(refs, &m, nb, &bs)
		// SAH sweep (Wald 2007, section 3).
		var rArea [maxBins]float64
		var rCount [maxBins]int32
		bestCost := math.Inf(1)
		bestAxis, bestSplit := -1, 0
		for a := 0; a < 3; a++ {
			if m.scale[a] == 0 {
				continue
			}
			acc := emptyBox32()
			cnt := int32(0)
			for k := nb - 1; k > 0; k-- {
				bk := &bs[a][k]
				acc.extendBox(&bk.lo, &bk.hi)
				cnt += bk.n
				rArea[k] = acc.area()
				rCount[k] = cnt
			}
			acc = emptyBox32()
			cnt = 0
			for k := 1; k < nb; k++ {
				bk := &bs[a][k-1]
				acc.extendBox(&bk.lo, &bk.hi)
				cnt += bk.n
				if cnt == 0 || rCount[k] == 0 {
					continue
				}
				c := acc.area()*float64(cnt) + rArea[k]*float64(rCount[k])
				if c < bestCost {
					bestCost, bestAxis, bestSplit = c, a, k
				}
			}
		}
		for k := 0; k < nb; k++ {
			nodeBox.extendBox(&bs[0][k].lo, &bs[0][k].hi)
		}
		if bestAxis >= 0 {
			area := nodeBox.area()
			leafCost := sahIntersect * float64(n)
			splitCost := sahTraversal + sahIntersect*bestCost/area
			if area == 0 {
				splitCost = math.Inf(1)
			}
			if n <= maxLeafSize && leafCost <= splitCost {
				st.leaves = 1
				return ^int32(lo), int32(n), st
			}
			mid, lcb, rcb = partition(refs, &m, bestAxis, int32(bestSplit))
			mid += lo
			lbox, rbox = emptyBox32(), emptyBox32()
			for k := 0; k < bestSplit; k++ {
				lbox.extendBox(&bs[bestAxis][k].lo, &bs[bestAxis][k].hi)
			}
			for k := bestSplit; k < nb; k++ {
				rbox.extendBox(&bs[bestAxis][k].lo, &bs[bestAxis][k].hi)
			}
		} else if n <= maxLeafSize {
			st.leaves = 1
			return ^int32(lo), int32(n), st
		}
	}
	if mid < 0 {
		// Object-median split: all centroids coincide, or the tree is deep.
		mid = lo + n/2
		lbox, rbox, lcb, rcb = emptyBox32(), emptyBox32(), emptyBox32(), emptyBox32()
		for i := range refs {
			r := &refs[i]
			if i < n/2 {
				lbox.extendBox(&r.lo, &r.hi)
				lcb.extendPoint(r.lo[0]+r.hi[0], r.lo[1]+r.hi[1], r.lo[2]+r.hi[2])
			} else {
				rbox.extendBox(&r.lo, &r.hi)
				rcb.extendPoint(r.lo[0]+r.hi[0], r.lo[1]+r.hi[1], r.lo[2]+r.hi[2])
			}
		}
	}
	// Inner node at base; the left subtree's inner nodes fit in
	// [base+1, base+(mid-lo)), the right one's in [base+(mid-lo), base+n-1).
	st.inner = 1
	var l, r int32
	var lc, rc int32
	var ls, rs subtreeStats
	if mid-lo >= parallelSubtree && hi-mid >= parallelSubtree && bd.sem != nil {
		select {
		case bd.sem <- struct{}{}:
			var wg sync.WaitGroup
			wg.Add(1)
			go func() {
				l, lc, ls = bd.build(lo, mid, lcb, base+1, depth+1)
				<-bd.sem
				wg.Done()
			}()
			r, rc, rs = bd.build(mid, hi, rcb, base+(mid-lo), depth+1)
			wg.Wait()
		default:
			l, lc, ls = bd.build(lo, mid, lcb, base+1, depth+1)
			r, rc, rs = bd.build(mid, hi, rcb, base+(mid-lo), depth+1)
		}
	} else {
		l, lc, ls = bd.build(lo, mid, lcb, base+1, depth+1)
		r, rc, rs = bd.build(mid, hi, rcb, base+(mid-lo), depth+1)
	}
	st.add(ls)
	st.add(rs)
	nd := &bd.nodes[base]
	nd.setChild(0, lbox, l, lc)
	nd.setChild(1, rbox, r, rc)
	return int32(base), 0, st
}

// binParallel bins refs, over several goroutines when the range is large.
func (bd *builder) binParallel(refs []primRef, m *binMap, nb int, bs *binSet) {
	bs.reset(nb)
	parts := bd.threads
	if len(refs) < parallelBinning || parts <= 1 {
		binRefs(refs, m, bs)
		return
	}
	sets := make([]binSet, parts)
	var wg sync.WaitGroup
	for p := 0; p < parts; p++ {
		lo, hi := len(refs)*p/parts, len(refs)*(p+1)/parts
		wg.Add(1)
		go func() {
			defer wg.Done()
			sets[p].reset(nb)
			binRefs(refs[lo:hi], m, &sets[p])
		}()
	}
	wg.Wait()
	for p := range sets {
		for a := 0; a < 3; a++ {
			for k := 0; k < nb; k++ {
				src, dst := &sets[p][a][k], &bs[a][k]
				dst.n += src.n
				for c := 0; c < 3; c++ {
					dst.lo[c] = min(dst.lo[c], src.lo[c])
					dst.hi[c] = max(dst.hi[c], src.hi[c])
				}
			}
		}
	}
}

// partition moves the refs whose bin along axis is below split to the front
// and returns their count and the doubled-centroid bounds of both sides.
func partition(refs []primRef, m *binMap, axis int, split int32) (int, box32, box32) {
	lcb, rcb := emptyBox32(), emptyBox32()
	i, j := 0, len(refs)-1
	for i <= j {
		r := &refs[i]
		cx, cy, cz := r.lo[0]+r.hi[0], r.lo[1]+r.hi[1], r.lo[2]+r.hi[2]
		c := cx
		if axis == 1 {
			c = cy
		} else if axis == 2 {
			c = cz
		}
		if m.bin(c, axis) < split {
			lcb.extendPoint(cx, cy, cz)
			i++
		} else {
			rcb.extendPoint(cx, cy, cz)
			refs[i], refs[j] = refs[j], refs[i]
			j--
		}
	}
	return i, lcb, rcb
}

func (nd *bvhNode) setChild(c int, b box32, ref, count int32) {
	o := 6 * (c & 1)
	nd.box[o+0], nd.box[o+1], nd.box[o+2] = b.lo[0], b.lo[1], b.lo[2]
	nd.box[o+3], nd.box[o+4], nd.box[o+5] = b.hi[0], b.hi[1], b.hi[2]
	nd.child[c&1] = ref
	nd.count[c&1] = count
}
