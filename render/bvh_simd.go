//go:build goexperiment.simd && amd64

package render

import (
	"math"
	"simd/archsimd"
)

// With GOEXPERIMENT=simd on amd64, when the CPU has AVX2, the binary SAH
// tree is collapsed to an 8-wide one and traversal tests the eight boxes of
// a node with one Float32x8 slab test (bvh_simd_octants.go): a third fewer
// levels than the 4-wide tree, so fewer dependent node loads per ray, which
// is what incoherent rays wait on. The scalar loops over the 4-wide tree
// stay compiled in, and a Float32x4 loop over it: tests run all three.

// vectorTraversal reports whether scenes are built for the vector loops;
// tests switch it off to check the scalar ones in the same build.
var vectorTraversal = archsimd.X86.AVX2()

// vectorWidth is the width of the tree the vector loops traverse, 8 or 4;
// tests set 4 to check the Float32x4 loop.
var vectorWidth = 8

// TraversalPath names the traversal loops the scene's queries run, for
// reports.
func (s *Scene) TraversalPath() string {
	switch {
	case s.vec.n8 != nil:
		return "simd: 8-wide tree, Float32x8 box tests, Float64x4 triangle tests (GOEXPERIMENT=simd, AVX2)"
	case vectorTraversal:
		return "simd: 4-wide tree, Float32x4 box tests (GOEXPERIMENT=simd, AVX2)"
	}
	return "scalar"
}

// packedLeaves reports whether NewScene builds for the 8-wide loop, whose
// leaves are tested in packs of four.
func packedLeaves() bool { return vectorTraversal && vectorWidth == 8 }

// vectorNodes holds the 8-wide tree of a scene built for the vector loops
// and its leaves' triangles in packs of four.
type vectorNodes struct {
	n8    []bvh8Node // leaf references count packs: ^(first pack << leafCountBits | packs)
	packs []triPack
}

// triPack holds four triangles of a leaf in structure-of-arrays form, one
// Float32x4 per vertex coordinate; a leaf of n triangles takes ceil(n/4)
// packs, and the unused lanes of its last pack repeat one vertex, a
// degenerate triangle that no ray hits (all three edge functions are 0).
type triPack struct {
	v     [9][4]float32 // rows x0 y0 z0 x1 y1 z1 x2 y2 z2
	first int32         // index into Scene.tris of lane 0; lane l is first + l
	_     [3]int32
}

// makePacks replaces the triangle ranges of the 8-wide leaves by ranges of
// packs, in depth-first node order, filled on up to threads goroutines.
func (s *Scene) makePacks(threads int) {
	n8 := s.vec.n8
	// start[i] is the first pack of node i's leaves.
	start := make([]int32, len(n8)+1)
	for i := range n8 {
		np := 0
		for _, ref := range n8[i].child {
			if ref < 0 && ref != emptyChild {
				np += (int(^ref&(1<<leafCountBits-1)) + 3) / 4
			}
		}
		start[i+1] = start[i] + int32(np)
	}
	packs := make([]triPack, start[len(n8)])
	adviseHugePages(packs)
	parallelFor(len(n8), threads, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			next := int(start[i])
			for c, ref := range n8[i].child {
				if ref >= 0 || ref == emptyChild {
					continue
				}
				first := int(^ref >> leafCountBits)
				count := int(^ref & (1<<leafCountBits - 1))
				p0 := next
				for k := 0; k < count; k += 4 {
					p := &packs[next]
					next++
					p.first = int32(first + k)
					for l := 0; l < 4; l++ {
						if k+l < count {
							t := &s.tris[first+k+l]
							for r := 0; r < 9; r++ {
								p.v[r][l] = t[r]
							}
						} else {
							t := &s.tris[first+k] // vertex 0 three times
							for r := 0; r < 9; r++ {
								p.v[r][l] = t[r%3]
							}
						}
					}
				}
				n8[i].child[c] = ^(int32(p0)<<leafCountBits | int32(next-p0))
			}
		}
	})
	s.vec.packs = packs
}

// collapse makes the traversed tree from the binary one (after s.tris is
// filled) and returns its node count: 8-wide for the vector loops when its traversal stack is big
// enough (always, but for trees far deeper than any real mesh makes),
// 4-wide otherwise.
func (s *Scene) collapse(bin []bvhNode, threads int) int {
	if packedLeaves() {
		n8 := collapse8(bin, threads)
		if stackNeed8(n8, 0) <= wideStackSize8 {
			s.vec.n8 = n8
			s.makePacks(threads)
			return len(n8)
		}
	}
	s.nodes, _ = collapseBVH(bin, threads)
	return len(s.nodes)
}

func (s *Scene) traverseLoops(q *rayQuery, anyHit bool) bool {
	if len(s.tris) == 0 {
		return false
	}
	if s.vec.n8 != nil {
		return s.traverseOctantVec8(q, anyHit)
	}
	if len(s.nodes) == 0 {
		return false
	}
	if vectorTraversal {
		return s.traverseOctantVec(q, anyHit)
	}
	return s.traverseOctant(q, anyHit)
}

// wideStackSize8 bounds the traversal stack of the 8-wide tree. A visit
// leaves at most seven entries, but nodes hold about five children and the
// tree of a few million triangles is some eight levels deep; a deeper tree
// falls back to the 4-wide one. The stack is small because Go zeroes it on
// every query: 64 entries instead of 256 made primary rays about 7% faster.
const wideStackSize8 = 64

// bvh8Node holds the boxes of up to eight children in structure-of-arrays
// form, one Float32x8 per row.
type bvh8Node struct {
	box   [6][8]float32 // rows: min x, min y, min z, max x, max y, max z; one column per child
	child [8]int32      // as bvh4Node.child
	_     [8]int32      // pads the node to 256 bytes, four cache lines
}

// collapse8 turns the binary tree into an 8-wide one in depth-first order
// by the greedy SAH collapse of collapseBVH: each node takes the two
// children of a binary node and opens the inner child of largest surface
// area until it has eight. As collapseWith, it emits the root's subtrees on
// up to threads goroutines and lays them out in the serial order.
func collapse8(bin []bvhNode, threads int) []bvh8Node {
	root := &collapser8{bin: bin, top: true}
	root.emit(0)
	subs := make([]collapser8, len(root.pend))
	forEachParallel(len(subs), threads, func(k int) {
		subs[k] = collapser8{bin: bin}
		subs[k].emit(root.pend[k].ref)
	})
	total := 1
	for k := range subs {
		total += len(subs[k].out)
	}
	out := make([]bvh8Node, 1, total)
	adviseHugePages(out[:total])
	out[0] = root.out[0]
	for k := range subs {
		off := int32(len(out))
		out[0].child[root.pend[k].slot] = off
		for i := range subs[k].out {
			nd := &subs[k].out[i]
			for c, r := range nd.child {
				if r >= 0 {
					nd.child[c] = r + off
				}
			}
		}
		out = append(out, subs[k].out...)
	}
	return out
}

// collapser8 is collapser4 for the 8-wide tree (greedy only).
type collapser8 struct {
	bin  []bvhNode
	out  []bvh8Node
	top  bool
	pend []pendingChild
}

func (c *collapser8) emit(ref int32) int32 {
	bin := c.bin
	top := c.top
	c.top = false
	var slots [8]wideSlot
	two := binChildren(&bin[ref])
	slots[0], slots[1] = two[0], two[1]
	n := 2
	for n < 8 {
		best, bestArea := -1, -1.0
		for i := 0; i < n; i++ {
			if slots[i].ref < 0 {
				continue
			}
			if a := slots[i].box.area(); a > bestArea {
				best, bestArea = i, a
			}
		}
		if best < 0 {
			break
		}
		kids := binChildren(&bin[slots[best].ref])
		copy(slots[best+2:n+1], slots[best+1:n])
		slots[best], slots[best+1] = kids[0], kids[1]
		n++
	}
	idx := int32(len(c.out))
	c.out = append(c.out, bvh8Node{})
	var refs [8]int32
	for i := range refs {
		refs[i] = emptyChild
		if i < n {
			refs[i] = slots[i].ref
			if refs[i] >= 0 {
				if top {
					c.pend = append(c.pend, pendingChild{i, refs[i]})
					continue
				}
				refs[i] = c.emit(refs[i])
			}
		}
	}
	nd := &c.out[idx]
	inf := float32(math.Inf(1))
	for i := range refs {
		b := box32{[3]float32{inf, inf, inf}, [3]float32{-inf, -inf, -inf}}
		if i < n {
			b = slots[i].box
		}
		for a := 0; a < 3; a++ {
			nd.box[a][i], nd.box[3+a][i] = b.lo[a], b.hi[a]
		}
		nd.child[i] = refs[i]
	}
	return idx
}

// stackNeed8 returns the most stack entries the 8-wide loop can hold at
// once below node ni: a visit of a node with k children leaves at most k-1
// on the stack (it holds k for a moment while it sorts them), and the
// deepest path adds them up.
func stackNeed8(nodes []bvh8Node, ni int32) int {
	need, k := 0, 0
	for _, c := range nodes[ni].child {
		if c != emptyChild {
			k++
		}
		if c >= 0 {
			need = max(need, stackNeed8(nodes, c))
		}
	}
	return max(need+k-1, k)
}
