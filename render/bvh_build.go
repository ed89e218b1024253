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
	// maxLeafSize bounds the triangles of one leaf; a leaf reference packs
	// the count in leafCountBits bits.
	maxLeafSize   = 8
	leafCountBits = 4
	// sahTraversal and sahIntersect are the SAH costs of visiting a node
	// and of testing a triangle (relative units).
	// sahTraversal 3 rather than 2 (chosen on bench File*, scalar build,
	// three interleaved runs at load 5): larger leaves, random rays about
	// 25% faster, the others within 4%, and a build 14% cheaper in CPU time.
	sahTraversal = 3.0
	sahIntersect = 1.0
	// sahPack is the cost of testing a pack of four triangles at once, and
	// sahPackNode that of a node, in the vector build (bvh_simd.go; both
	// chosen on bench File*).
	sahPack     = 1.5
	sahPackNode = 2.0
	// medianDepth is the depth from which every split is an object-median
	// split, so that no input can make the tree deeper than the fixed
	// traversal stack: depth <= medianDepth + log2(triangles) < stackSize.
	medianDepth = 32
	// parallelBinning is the range size from which binning is split over
	// threads; parallelSubtree the size from which a subtree gets its own
	// goroutine.
	parallelBinning = 1 << 16
	parallelSubtree = 1 << 12
	maxBins         = 32
	// singleAxisBelow is the range size below which only the widest
	// centroid axis is binned.
	singleAxisBelow = 1 << 12
)

// primRef is one triangle during the build: its bounds and index.
type primRef struct {
	lo [3]float32
	id int32
	hi [3]float32
	_  int32
}

type bin struct {
	box32
	n int32
}

type binSet [3][maxBins]bin

func (bs *binSet) reset(nb int) {
	inf := float32(math.Inf(1))
	for a := range bs {
		for k := 0; k < nb && k < maxBins; k++ {
			bs[a][k] = bin{box32: box32{[3]float32{inf, inf, inf}, [3]float32{-inf, -inf, -inf}}}
		}
	}
}

func resetBins(bins *[maxBins]bin, nb int) {
	inf := float32(math.Inf(1))
	for k := 0; k < nb && k < maxBins; k++ {
		bins[k] = bin{box32: box32{[3]float32{inf, inf, inf}, [3]float32{-inf, -inf, -inf}}}
	}
}

// box32 is a float32 box; centroid boxes hold doubled centroids (lo+hi).
type box32 struct{ lo, hi [3]float32 }

// doubled returns b scaled by 2 (exact), the bounds of the doubled
// centroids of the triangles b bounds.
func doubled(b box32) box32 {
	return box32{[3]float32{2 * b.lo[0], 2 * b.lo[1], 2 * b.lo[2]}, [3]float32{2 * b.hi[0], 2 * b.hi[1], 2 * b.hi[2]}}
}

func emptyBox32() box32 {
	inf := float32(math.Inf(1))
	return box32{[3]float32{inf, inf, inf}, [3]float32{-inf, -inf, -inf}}
}

func (b *box32) extendBox(lo, hi *[3]float32) { *b = union32(*b, box32{*lo, *hi}) }

func union32(a, b box32) box32 {
	return box32{
		[3]float32{min(a.lo[0], b.lo[0]), min(a.lo[1], b.lo[1]), min(a.lo[2], b.lo[2])},
		[3]float32{max(a.hi[0], b.hi[0]), max(a.hi[1], b.hi[1]), max(a.hi[2], b.hi[2])},
	}
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

// binRefs adds refs to bs (which must have been reset). The bin update is
// written out by hand: the compiler does not inline a helper this size.
func binRefs(refs []primRef, m *binMap, bs *binSet) {
	lx, ly, lz := m.lo[0], m.lo[1], m.lo[2]
	sx, sy, sz := m.scale[0], m.scale[1], m.scale[2]
	last := m.nb - 1
	for i := range refs {
		r := &refs[i]
		l0, l1, l2, h0, h1, h2 := r.lo[0], r.lo[1], r.lo[2], r.hi[0], r.hi[1], r.hi[2]
		kx := min(max(int32((l0+h0-lx)*sx), 0), last)
		ky := min(max(int32((l1+h1-ly)*sy), 0), last)
		kz := min(max(int32((l2+h2-lz)*sz), 0), last)
		b := &bs[0][kx&(maxBins-1)]
		b.n++
		b.lo[0], b.lo[1], b.lo[2] = min(b.lo[0], l0), min(b.lo[1], l1), min(b.lo[2], l2)
		b.hi[0], b.hi[1], b.hi[2] = max(b.hi[0], h0), max(b.hi[1], h1), max(b.hi[2], h2)
		b = &bs[1][ky&(maxBins-1)]
		b.n++
		b.lo[0], b.lo[1], b.lo[2] = min(b.lo[0], l0), min(b.lo[1], l1), min(b.lo[2], l2)
		b.hi[0], b.hi[1], b.hi[2] = max(b.hi[0], h0), max(b.hi[1], h1), max(b.hi[2], h2)
		b = &bs[2][kz&(maxBins-1)]
		b.n++
		b.lo[0], b.lo[1], b.lo[2] = min(b.lo[0], l0), min(b.lo[1], l1), min(b.lo[2], l2)
		b.hi[0], b.hi[1], b.hi[2] = max(b.hi[0], h0), max(b.hi[1], h1), max(b.hi[2], h2)
	}
}

// buildScratch is the per-goroutine working memory of the build.
type buildScratch struct {
	bins   binSet
	rArea  [maxBins]float64
	rCount [maxBins]int32
	rBox   [3][maxBins]box32 // bounds of bins k.. per axis, from the right-to-left sweep
}

func (bd *builder) tryAcquire() bool {
	select {
	case bd.sem <- struct{}{}:
		return true
	default:
		return false
	}
}

// buildPair builds the left child on a new goroutine (the semaphore slot
// is already held) and the right one on this one.
func (bd *builder) buildPair(lo, mid, hi int, lcb, rcb box32, base, depth int, sc *buildScratch) (l, lc int32, ls subtreeStats, r, rc int32, rs subtreeStats) {
	type result struct {
		ref, count int32
		st         subtreeStats
	}
	res := new(result)
	done := make(chan struct{})
	go func() {
		res.ref, res.count, res.st = bd.build(lo, mid, lcb, base+1, depth+1, new(buildScratch))
		<-bd.sem
		close(done)
	}()
	r, rc, rs = bd.build(mid, hi, rcb, base+(mid-lo), depth+1, sc)
	<-done
	return res.ref, res.count, res.st, r, rc, rs
}

// binRefsAxis bins refs along one axis into bins (which must have been reset).
func binRefsAxis(refs []primRef, m *binMap, a int, bins *[maxBins]bin) {
	a &= 3
	if a > 2 {
		return
	}
	la, sa := m.lo[a], m.scale[a]
	last := m.nb - 1
	for i := range refs {
		r := &refs[i]
		l0, l1, l2, h0, h1, h2 := r.lo[0], r.lo[1], r.lo[2], r.hi[0], r.hi[1], r.hi[2]
		k := min(max(int32((r.lo[a]+r.hi[a]-la)*sa), 0), last)
		b := &bins[k&(maxBins-1)]
		b.n++
		b.lo[0], b.lo[1], b.lo[2] = min(b.lo[0], l0), min(b.lo[1], l1), min(b.lo[2], l2)
		b.hi[0], b.hi[1], b.hi[2] = max(b.hi[0], h0), max(b.hi[1], h1), max(b.hi[2], h2)
	}
}

type builder struct {
	packed  bool // leaves are tested in packs of four (packedLeaves)
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
func (bd *builder) build(lo, hi int, cb box32, base int, depth int, sc *buildScratch) (ref int32, count int32, st subtreeStats) {
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
		nb := 4
		switch {
		case n >= 1024:
			nb = 32
		case n >= 128:
			nb = 16
		case n >= 16:
			nb = 8
		}
		m := newBinMap(cb, nb)
		bs := &sc.bins
		if n < singleAxisBelow {
			// Small ranges bin along the widest centroid axis only: most of
			// the build's nodes are small, and the other axes rarely win there.
			a := 0
			if m.scale[1] != 0 && (m.scale[0] == 0 || cb.hi[1]-cb.lo[1] > cb.hi[0]-cb.lo[0]) {
				a = 1
			}
			if m.scale[2] != 0 && (m.scale[a] == 0 || cb.hi[2]-cb.lo[2] > cb.hi[a]-cb.lo[a]) {
				a = 2
			}
			for k := 0; k < 3; k++ {
				if k != a {
					m.scale[k] = 0
				}
			}
			resetBins(&bs[a], nb)
			binRefsAxis(refs, &m, a, &bs[a])
		} else {
			bd.binParallel(refs, m, nb, bs)
		}
		// SAH sweep (Wald 2007, section 3).
		rArea := &sc.rArea
		rCount := &sc.rCount
		bestCost := math.Inf(1)
		bestAxis, bestSplit := -1, 0
		var bestLeft box32
		for a := 0; a < 3; a++ {
			if m.scale[a] == 0 {
				continue
			}
			rBox := &sc.rBox[a]
			acc := emptyBox32()
			cnt := int32(0)
			for k := nb - 1; k > 0; k-- {
				bk := &bs[a][k]
				acc = union32(acc, bk.box32)
				cnt += bk.n
				rArea[k] = acc.area()
				rCount[k] = cnt
				rBox[k&(maxBins-1)] = acc
			}
			acc = emptyBox32()
			cnt = 0
			for k := 1; k < nb; k++ {
				bk := &bs[a][k-1]
				acc = union32(acc, bk.box32)
				cnt += bk.n
				if cnt == 0 || rCount[k] == 0 {
					continue
				}
				c := acc.area()*float64(cnt) + rArea[k]*float64(rCount[k])
				if c < bestCost {
					bestCost, bestAxis, bestSplit = c, a, k
					bestLeft = acc
				}
			}
		}
		if bestAxis >= 0 {
			lbox, rbox = bestLeft, sc.rBox[bestAxis][bestSplit&(maxBins-1)]
			nodeBox = union32(lbox, rbox)
		}
		if bestAxis >= 0 {
			area := nodeBox.area()
			leafCost := sahIntersect * float64(n)
			splitCost := sahTraversal + sahIntersect*bestCost/area
			if bd.packed {
				// Leaves are tested in packs of four: a leaf costs its
				// packs, the children about a quarter pack per triangle.
				leafCost = sahPack * float64((n+3)/4)
				splitCost = sahPackNode + sahPack/4*bestCost/area
			}
			if area == 0 {
				splitCost = math.Inf(1)
			}
			if n <= maxLeafSize && leafCost <= splitCost {
				st.leaves = 1
				return ^int32(lo), int32(n), st
			}
			mid = lo + partition(refs, &m, bestAxis, int32(bestSplit))
			// The children bin over their doubled bounds rather than their
			// doubled-centroid bounds: these come free from the bins, and
			// for a mesh of small triangles they differ by half a triangle
			// at each end. A range whose centroids all coincide then finds
			// no split with both sides non-empty and takes the median split.
			lcb, rcb = doubled(lbox), doubled(rbox)
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
				lbox = union32(lbox, box32{r.lo, r.hi})
				lcb.extendPoint(r.lo[0]+r.hi[0], r.lo[1]+r.hi[1], r.lo[2]+r.hi[2])
			} else {
				rbox = union32(rbox, box32{r.lo, r.hi})
				rcb.extendPoint(r.lo[0]+r.hi[0], r.lo[1]+r.hi[1], r.lo[2]+r.hi[2])
			}
		}
	}
	// Inner node at base; the left subtree's inner nodes fit in
	// [base+1, base+(mid-lo)), the right one's in [base+(mid-lo), base+n-1).
	st.inner = 1
	var l, r, lc, rc int32
	var ls, rs subtreeStats
	if mid-lo >= parallelSubtree && hi-mid >= parallelSubtree && bd.sem != nil && bd.tryAcquire() {
		l, lc, ls, r, rc, rs = bd.buildPair(lo, mid, hi, lcb, rcb, base, depth, sc)
	} else {
		l, lc, ls = bd.build(lo, mid, lcb, base+1, depth+1, sc)
		r, rc, rs = bd.build(mid, hi, rcb, base+(mid-lo), depth+1, sc)
	}
	st.add(ls)
	st.add(rs)
	nd := &bd.nodes[base]
	nd.setChild(0, lbox, l, lc)
	nd.setChild(1, rbox, r, rc)
	return int32(base), 0, st
}

// binParallel bins refs, over several goroutines when the range is large.
func (bd *builder) binParallel(refs []primRef, m binMap, nb int, bs *binSet) {
	bs.reset(nb)
	if len(refs) < parallelBinning || bd.threads <= 1 {
		binRefs(refs, &m, bs)
		return
	}
	bd.binLarge(refs, m, nb, bs)
}

// binLarge bins a large range in parallel chunks and merges the bins.
func (bd *builder) binLarge(refs []primRef, m binMap, nb int, bs *binSet) {
	parts := bd.threads
	sets := make([]binSet, parts) // large ranges only: a few allocations per build
	var wg sync.WaitGroup
	for p := 0; p < parts; p++ {
		lo, hi := len(refs)*p/parts, len(refs)*(p+1)/parts
		wg.Add(1)
		go func() {
			defer wg.Done()
			sets[p].reset(nb)
			mm := m
			binRefs(refs[lo:hi], &mm, &sets[p])
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
// and returns their count.
func partition(refs []primRef, m *binMap, axis int, split int32) int {
	i, j := 0, len(refs)-1
	for i <= j {
		r := &refs[i]
		var c float32
		switch axis {
		case 0:
			c = r.lo[0] + r.hi[0]
		case 1:
			c = r.lo[1] + r.hi[1]
		default:
			c = r.lo[2] + r.hi[2]
		}
		if m.bin(c, axis) < split {
			i++
		} else {
			refs[i], refs[j] = refs[j], refs[i]
			j--
		}
	}
	return i
}

// setChild stores a child's box rounded outwards by one float32 step. The
// padding matters for rays with a direction component exactly zero: their
// reciprocal is clamped to +-1e30, so an origin exactly on a far plane would
// give a far distance of 0 instead of +Inf; after padding an origin on a
// vertex's coordinate is strictly inside the slab.
func (nd *bvhNode) setChild(c int, b box32, ref, count int32) {
	if b.lo[0] <= b.hi[0] {
		for a := 0; a < 3; a++ {
			b.lo[a] = -nextUp32(-b.lo[a])
			b.hi[a] = nextUp32(b.hi[a])
		}
	}
	o := 6 * (c & 1)
	nd.box[o+0], nd.box[o+1], nd.box[o+2] = b.lo[0], b.lo[1], b.lo[2]
	nd.box[o+3], nd.box[o+4], nd.box[o+5] = b.hi[0], b.hi[1], b.hi[2]
	if ref < 0 { // leaf: first triangle and count packed as ^(first<<4 | count)
		ref = ^(^ref<<leafCountBits | count)
	}
	nd.child[c&1] = ref
}

// nextUp32 returns the least float32 above the finite x: math.Nextafter32
// towards +Inf without its NaN and infinity cases, which the build never
// meets (mesh coordinates are checked finite).
func nextUp32(x float32) float32 {
	switch {
	case x > 0:
		return math.Float32frombits(math.Float32bits(x) + 1)
	case x < 0:
		return math.Float32frombits(math.Float32bits(x) - 1)
	}
	return math.Float32frombits(1) // from either zero: the least subnormal
}
