package render

import "math"

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
func collapseBVH(bin []bvhNode) ([]bvh4Node, int) {
	out, depth := collapseWith(bin, true)
	if stackNeed(out, 0) > wideStackSize || levelCollapseOnly {
		out, depth = collapseWith(bin, false)
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

func collapseWith(bin []bvhNode, greedy bool) ([]bvh4Node, int) {
	out := make([]bvh4Node, 0, len(bin)/2+1)
	var emit func(ref int32, depth int) (int32, int)
	emit = func(ref int32, depth int) (int32, int) {
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
		idx := int32(len(out))
		out = append(out, bvh4Node{})
		var refs [4]int32
		maxDepth := depth + 1
		for i := 0; i < 4; i++ {
			refs[i] = emptyChild
			if i < n {
				refs[i] = slots[i].ref
				if refs[i] >= 0 {
					var d int
					refs[i], d = emit(refs[i], depth+1)
					maxDepth = max(maxDepth, d)
				}
			}
		}
		nd := &out[idx]
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
	_, depth := emit(0, 0)
	return out, depth
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
