package demo

import (
	"math"
	"testing"
)

// The jar (without the card) must be a closed, consistently wound surface:
// every edge is used exactly twice, once in each direction (common practice
// for a watertight, oriented 2-manifold).
func TestJarIsClosedAndOriented(t *testing.T) {
	m := JarMesh(64, 40)
	type edge struct{ a, b uint32 }
	count := map[edge]int{}
	for tri := 0; tri < m.NumTriangles(); tri++ {
		if m.Segments[tri] == LabelCard {
			continue
		}
		v := m.Indices[3*tri : 3*tri+3]
		for k := 0; k < 3; k++ {
			count[edge{v[k], v[(k+1)%3]}]++
		}
	}
	for e, n := range count {
		if n != 1 || count[edge{e.b, e.a}] != 1 {
			t.Fatalf("edge %v used %d times, reverse %d times", e, n, count[edge{e.b, e.a}])
		}
	}
}

// The enclosed volume by the divergence theorem (sum of signed tetrahedra)
// must be positive (outward winding) and match the volume of revolution
// pi * integral (r_out^2 - r_in^2) dz of the profile (Pappus; common practice),
// up to the polygonal approximation and the relief (which averages out).
func TestJarVolumeMatchesRevolution(t *testing.T) {
	m := JarMesh(256, 200)
	var vol float64
	for tri := 0; tri < m.NumTriangles(); tri++ {
		if m.Segments[tri] == LabelCard {
			continue
		}
		i := m.Indices[3*tri : 3*tri+3]
		ax, ay, az := m.Vertex(i[0])
		bx, by, bz := m.Vertex(i[1])
		cx, cy, cz := m.Vertex(i[2])
		vol += (float64(ax)*(float64(by)*float64(cz)-float64(bz)*float64(cy)) -
			float64(ay)*(float64(bx)*float64(cz)-float64(bz)*float64(cx)) +
			float64(az)*(float64(bx)*float64(cy)-float64(by)*float64(cx))) / 6
	}
	// Integrate the analytic profile with the midpoint rule.
	const n = 20000
	var want float64
	for k := 0; k < n; k++ {
		z := JarHeight * (float64(k) + 0.5) / n
		ro := outerRadius(z)
		if z >= bandLow && z <= bandHigh {
			ro += bandRaise
		}
		a := ro * ro
		if z > innerFloorZ {
			ri := outerRadius(z) - jarWall
			a -= ri * ri
		}
		want += math.Pi * a * JarHeight / n
	}
	if vol <= 0 {
		t.Fatalf("signed volume %g: faces wound inward", vol)
	}
	if rel := math.Abs(vol-want) / want; rel > 0.01 {
		t.Errorf("volume %.4g m^3, revolution integral %.4g m^3 (%.2f%% apart)", vol, want, 100*rel)
	}
}

func TestJarFullSizeTriangleCount(t *testing.T) {
	m := JarMesh(448, 150)
	n := m.NumTriangles()
	if n < 180000 || n > 240000 {
		t.Errorf("full-size jar has %d triangles, want about 200k", n)
	}
	seen := map[int32]int{}
	for _, s := range m.Segments {
		seen[s]++
	}
	for lab := range SegmentNames {
		if seen[int32(lab)] == 0 {
			t.Errorf("segment %d (%s) has no triangles", lab, SegmentNames[lab])
		}
	}
	t.Logf("triangles %d, per segment %v", n, seen)
}
