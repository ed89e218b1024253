package render

import (
	"math"
	"math/rand/v2"
	"testing"
)

func TestBVHMatchesBruteForceQuick(t *testing.T) {
	m := displacedSphere(20)
	s, err := NewScene(m, 2)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("%+v", s.BuildStats())
	rng := rand.New(rand.NewPCG(1, 2))
	hits := 0
	for i := 0; i < 20000; i++ {
		o := Vec3{2.4*rng.Float64() - 1.2, 2.4*rng.Float64() - 1.2, 2.4*rng.Float64() - 1.2}
		r := Ray{o, randomDir(rng)}
		var h Hit
		got := s.Intersect(r, math.Inf(1), &h)
		bt, btri, want := bruteIntersect(s, r, math.Inf(1))
		if got != want {
			t.Fatalf("ray %d: bvh %v brute %v", i, got, want)
		}
		if got {
			hits++
			if math.Abs(h.T-bt) > 1e-5*bt {
				t.Fatalf("ray %d: t %v vs %v (tri %d vs %d)", i, h.T, bt, h.Tri, btri)
			}
		}
		if occ := s.Occluded(r, math.Inf(1)); occ != want {
			t.Fatalf("ray %d: occluded %v brute %v", i, occ, want)
		}
	}
	t.Logf("hits %d", hits)
}
