package render

import (
	"math"
	"sync"
	"sync/atomic"
)

// The traversed hierarchy is 4-wide: the binary SAH tree is collapsed so
// that each node holds the boxes of up to four children (Wald, Benthin,
// Boulos, "Getting rid of packets", IEEE Symposium on Interactive Ray
// Tracing 2008; Dammertz, Hanika, Keller, "Shallow bounding volume
// hierarchies", EGSR 2008). Traversal is bound by the latency of the node
// loads, and a 4-wide tree has half the depth of a binary one: half the
// dependent loads and half the stack traffic per ray, at the same number of
// box tests.

// wideStackSize bounds the traversal stack of the 4-wide tree. A visit
// pushes at most three entries; the collapse checks that no path needs more
// than wideStackSize entries (see stackNeed).
const wideStackSize = 128

// bvh4Node holds the boxes of up to four children in structure-of-arrays
// form, so that the near and far planes of all four are addressed by one row
// each, chosen once per ray by the signs of its direction.
type bvh4Node struct {
	box   [6][4]float32 // rows: min x, min y, min z, max x, max y, max z; one column per child
	child [4]int32      // >= 0: node index; < 0: leaf ^(first triangle << leafCountBits | count)
	_     [4]int32      // pads the node to 128 bytes: two cache lines, which the adjacent-line prefetcher fetches together
}

// emptyChild is the reference of an unused child slot: a leaf of no
// triangles. Its box is empty (min +Inf, max -Inf), which no ray enters.
const emptyChild = int32(-1)

// collapseBVH turns the binary tree in bin (root at index 0) into a 4-wide
// one in depth-first order, the first child of a node following it in
// memory. Each node takes the two children of a binary node and then
// repeatedly opens the inner child of largest surface area (greedy SAH
// collapse) until it has four. If that leaves a path that needs more stack
// than wideStackSize (only for trees far deeper than any real mesh makes),
// it collapses again opening only whole levels, which halves the depth.
// It returns the nodes and the depth of the 4-wide tree.
func collapseBVH(bin []bvhNode, threads int) ([]bvh4Node, int) {
	out, depth := collapseWith(bin, true, threads)
	if stackNeed(out, 0) > wideStackSize || levelCollapseOnly {
		out, depth = collapseWith(bin, false, threads)
	}
	return out, depth
}

// levelCollapseOnly makes collapseBVH take its fallback; tests set it to
// check that path on meshes too small to need it.
var levelCollapseOnly = false

type wideSlot struct {
	box box32
	ref int32
}

func binChildren(nd *bvhNode) [2]wideSlot {
	var s [2]wideSlot
	for c := 0; c < 2; c++ {
		o := 6 * c
		s[c] = wideSlot{
			box32{[3]float32{nd.box[o], nd.box[o+1], nd.box[o+2]}, [3]float32{nd.box[o+3], nd.box[o+4], nd.box[o+5]}},
			nd.child[c],
		}
	}
	return s
}

// collapser4 emits the 4-wide collapse of a binary subtree depth-first
// into out. With top set, the first node emitted leaves its inner children
// pending (recorded in pend) for other collapsers to emit.
type collapser4 struct {
	bin    []bvhNode
	greedy bool
	out    []bvh4Node
	top    bool
	pend   []pendingChild
}

// pendingChild is an inner child slot of a tree's root whose subtree is
// emitted separately.
type pendingChild struct {
	slot int
	ref  int32 // binary node
}

func (c *collapser4) emit(ref int32, depth int) (int32, int) {
	bin, greedy := c.bin, c.greedy
	top := c.top
	c.top = false
	var slots [4]wideSlot
	var opened [4]bool // slot came from opening a child (not a child of the binary node itself)
	two := binChildren(&bin[ref])
	slots[0], slots[1] = two[0], two[1]
	n := 2
	for n < 4 {
		best, bestArea := -1, -1.0
		for i := 0; i < n; i++ {
			if slots[i].ref < 0 || (!greedy && opened[i]) {
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
		copy(opened[best+2:n+1], opened[best+1:n])
		opened[best], opened[best+1] = true, true
		n++
	}
	idx := int32(len(c.out))
	c.out = append(c.out, bvh4Node{})
	var refs [4]int32
	maxDepth := depth + 1
	for i := 0; i < 4; i++ {
		refs[i] = emptyChild
		if i < n {
			refs[i] = slots[i].ref
			if refs[i] >= 0 {
				if top {
					c.pend = append(c.pend, pendingChild{i, refs[i]})
					continue
				}
				var d int
				refs[i], d = c.emit(refs[i], depth+1)
				maxDepth = max(maxDepth, d)
			}
		}
	}
	nd := &c.out[idx]
	inf := float32(math.Inf(1))
	for i := 0; i < 4; i++ {
		b := box32{[3]float32{inf, inf, inf}, [3]float32{-inf, -inf, -inf}}
		if i < n {
			b = slots[i].box
		}
		for a := 0; a < 3; a++ {
			nd.box[a][i], nd.box[3+a][i] = b.lo[a], b.hi[a]
		}
		nd.child[i] = refs[i]
	}
	return idx, maxDepth
}

// collapseWith emits the root, then the subtrees of its inner children on
// up to threads goroutines, and lays those out after the root in slot
// order: the serial depth-first order, so the tree does not depend on the
// thread count.
func collapseWith(bin []bvhNode, greedy bool, threads int) ([]bvh4Node, int) {
	root := &collapser4{bin: bin, greedy: greedy, top: true}
	root.emit(0, 0)
	subs := make([]collapser4, len(root.pend))
	depths := make([]int, len(root.pend))
	forEachParallel(len(subs), threads, func(k int) {
		subs[k] = collapser4{bin: bin, greedy: greedy}
		_, depths[k] = subs[k].emit(root.pend[k].ref, 1)
	})
	total := 1
	for k := range subs {
		total += len(subs[k].out)
	}
	out := make([]bvh4Node, 1, total)
	adviseHugePages(out[:total])
	out[0] = root.out[0]
	depth := 1
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
		depth = max(depth, depths[k])
	}
	return out, depth
}

// forEachParallel runs body(0..n-1) on up to threads goroutines, each
// taking the next index.
func forEachParallel(n, threads int, body func(k int)) {
	var next atomic.Int32
	var wg sync.WaitGroup
	for g := 0; g < max(1, min(threads, n)); g++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for k := int(next.Add(1)) - 1; k < n; k = int(next.Add(1)) - 1 {
				body(k)
			}
		}()
	}
	wg.Wait()
}

// stackNeed returns the most stack entries a traversal below node ni can
// hold at once: a visit pushes three entries (the children after the
// nearest, hit or not), and the deepest path adds them up.
func stackNeed(nodes []bvh4Node, ni int32) int {
	need := 0
	for _, c := range nodes[ni].child {
		if c >= 0 {
			need = max(need, stackNeed(nodes, c))
		}
	}
	return need + 3
}
