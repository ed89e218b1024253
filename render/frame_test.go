package render

import (
	"math"
	"math/rand/v2"
	"testing"

	"patina/brdf"
)

// TestFrameOrthonormal checks the properties Duff et al. (JCGT 6(1), 2017)
// prove for their basis: T, B, N orthonormal and right-handed for every unit
// normal, including the poles and the n.z = -1 region where the original
// Frisvad construction loses precision; and ToWorld inverts ToLocal.
func TestFrameOrthonormal(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	normals := []Vec3{{0, 0, 1}, {0, 0, -1}, {1, 0, 0}, {0, -1, 0}, {0, math.Copysign(0, -1), -1}, Vec3{1e-9, 0, -1}.Norm(), Vec3{0, 1e-12, -1}.Norm()}
	for i := 0; i < 10000; i++ {
		normals = append(normals, randomDir(rng))
	}
	for _, n := range normals {
		f := NewFrame(n)
		if math.Abs(f.T.Len()-1) > 1e-12 || math.Abs(f.B.Len()-1) > 1e-12 ||
			math.Abs(f.T.Dot(f.B)) > 1e-12 || math.Abs(f.T.Dot(n)) > 1e-12 || math.Abs(f.B.Dot(n)) > 1e-12 {
			t.Fatalf("n %v: not orthonormal: %+v", n, f)
		}
		if f.T.Cross(f.B).Sub(n).Len() > 1e-12 {
			t.Fatalf("n %v: T x B = %v, not N", n, f.T.Cross(f.B))
		}
		l := f.ToLocal(n)
		if math.Abs(l.Z-1) > 1e-12 || math.Abs(l.X) > 1e-12 || math.Abs(l.Y) > 1e-12 {
			t.Fatalf("n %v: normal in local frame %v", n, l)
		}
		v := randomDir(rng)
		if back := f.ToWorld(f.ToLocal(v)); back.Sub(v).Len() > 1e-12 {
			t.Fatalf("round trip %v -> %v", v, back)
		}
		// Angles are kept: the local cosine is the world cosine with N.
		if math.Abs(f.ToLocal(v).Z-v.Dot(n)) > 1e-12 {
			t.Fatal("cosine changed")
		}
	}
	if got := NewFrame(Vec3{0, 0, 1}).ToWorld(brdf.Vec{X: 1}); got.Sub(Vec3{1, 0, 0}).Len() > 1e-15 {
		t.Fatalf("frame of +Z maps local x to %v", got)
	}
}
