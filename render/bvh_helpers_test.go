package render

import (
	"math"
	"math/rand/v2"
)

// displacedSphere builds the mesh of the Embree side-by-side harness
// (shared/bench/embree/raybench.c, function gen): a cube-mapped sphere of
// 12*n*n triangles with the same displacement, vertex order and winding, so
// that n = 289 gives the harness's 1,002,252 triangles. It is closed: the
// six faces share no vertices but their border vertices coincide exactly
// (each is computed from the same cube point).
func displacedSphere(n int) *Mesh {
	disp := func(x, y, z float32) float32 {
		s := func(v float32) float32 { return float32(math.Sin(float64(v))) }
		c := func(v float32) float32 { return float32(math.Cos(float64(v))) }
		return 0.08*s(5*x+1.3)*s(4*y+0.7)*s(6*z) +
			0.04*s(13*x+17*y)*c(11*z+2) +
			0.02*s(31*y+29*z)*s(37*x)
	}
	point := func(face int, a, b float32) [3]float32 {
		var x, y, z float32
		switch face {
		case 0:
			x, y, z = 1, a, b
		case 1:
			x, y, z = -1, b, a
		case 2:
			x, y, z = b, 1, a
		case 3:
			x, y, z = a, -1, b
		case 4:
			x, y, z = a, b, 1
		default:
			x, y, z = b, a, -1
		}
		l := float32(math.Sqrt(float64(x*x + y*y + z*z)))
		x, y, z = x/l, y/l, z/l
		r := 1 + disp(x, y, z)
		return [3]float32{r * x, r * y, r * z}
	}
	m := &Mesh{}
	for f := 0; f < 6; f++ {
		base := uint32(len(m.Positions) / 3)
		for j := 0; j <= n; j++ {
			for i := 0; i <= n; i++ {
				p := point(f, -1+2*float32(i)/float32(n), -1+2*float32(j)/float32(n))
				m.Positions = append(m.Positions, p[:]...)
			}
		}
		for j := 0; j < n; j++ {
			for i := 0; i < n; i++ {
				a := base + uint32(j*(n+1)+i)
				b, c := a+1, a+uint32(n)+1
				d := c + 1
				m.Indices = append(m.Indices, a, b, d, a, d, c)
			}
		}
	}
	m.Segments = make([]int32, m.NumTriangles())
	for t := range m.Segments {
		m.Segments[t] = int32(t % 3)
	}
	m.SegmentLabels = []SegmentLabel{{Label: 0}, {Label: 1}, {Label: 2}}
	return m
}

// bruteIntersect tests every triangle with the same watertight test.
func bruteIntersect(s *Scene, r Ray, tmax float64) (t float64, tri int32, ok bool) {
	var q rayQuery
	if !q.init(r, tmax) {
		return 0, -1, false
	}
	all := s.tris
	for first := 0; first < len(all); first += 1024 {
		n := min(1024, len(all)-first)
		q.leaf(all, int32(first), int32(n), false)
	}
	if q.hitIndex < 0 {
		return 0, -1, false
	}
	return q.tmax, s.triID[q.hitIndex], true
}

func randomDir(rng *rand.Rand) Vec3 {
	z := 1 - 2*rng.Float64()
	ph := 2 * math.Pi * rng.Float64()
	s := math.Sqrt(math.Max(0, 1-z*z))
	return Vec3{s * math.Cos(ph), s * math.Sin(ph), z}
}
