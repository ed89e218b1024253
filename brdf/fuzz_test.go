package brdf

import (
	"math"
	"testing"
)

// FuzzEval: any parameters and directions, valid or not, evaluate without
// panicking; for parameters in range and unit directions the value is
// finite and non-negative, EvalGrad agrees with Eval, and a successful
// sample has a positive pdf equal to PDF.
func FuzzEval(f *testing.F) {
	f.Add(uint8(0), 0.5, 0.5, 0.5, 0.04, 0.04, 0.04, 0.5, 0.3, 1.0, 0.7, 2.0, 0.1, 0.2, 0.3)
	f.Add(uint8(1), 0.0, 0.0, 0.0, 1.0, 1.0, 1.0, 0.0, 1.5, 0.0, 0.01, 3.1, 0.9, 0.99, 0.01)
	f.Add(uint8(2), 1.0, 1.0, 1.0, 0.0, 0.0, 0.0, 1.0, 1.5707, 0.0, 1.5707, 3.14159, 0.5, 0.0, 0.0)
	f.Add(uint8(7), math.NaN(), -1.0, 2.0, math.Inf(1), 0.5, 0.5, -3.0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7)
	f.Fuzz(func(t *testing.T, kind uint8, d0, d1, d2, s0, s1, s2, r, to, po, ti, pi, u0, u1, u2 float64) {
		p := Params{Kind: Kind(kind), Diffuse: RGB{d0, d1, d2}, Specular: RGB{s0, s1, s2}, Roughness: r}
		wo, wi := Spherical(to, po), Spherical(ti, pi)
		fv := Eval(&p, wo, wi)
		var g Grad
		fg := EvalGrad(&p, wo, wi, &g)
		_ = PDF(&p, wo, wi)
		wi2, pdf, w, ok := Sample(&p, wo, [3]float64{frac(u0), frac(u1), frac(u2)})
		_ = p.Vector(nil)
		_ = p.FromVector([]float64{d0, d1, d2, s0, s1, s2, r}[:min(int(kind%8), 7)])
		if p.Validate() != nil || math.IsNaN(to+po+ti+pi) || math.IsInf(to+po+ti+pi, 0) {
			return
		}
		for c := 0; c < 3; c++ {
			if math.IsNaN(fv[c]) || math.IsInf(fv[c], 0) || fv[c] < 0 {
				t.Fatalf("Eval = %v for %+v wo %v wi %v", fv, p, wo, wi)
			}
			if math.IsNaN(w[c]) || w[c] < 0 {
				t.Fatalf("Sample weight %v", w)
			}
		}
		if fv != fg {
			t.Fatalf("EvalGrad value %v != Eval %v", fg, fv)
		}
		if ok && (!(pdf > 0) || relErr(pdf, PDF(&p, wo, wi2)) > 1e-9) {
			t.Fatalf("Sample pdf %g, PDF %g", pdf, PDF(&p, wo, wi2))
		}
	})
}

// frac maps any float to [0, 1).
func frac(x float64) float64 {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return 0
	}
	x -= math.Floor(x)
	if x >= 1 {
		return 0
	}
	return x
}

// FuzzParseKind: ParseKind accepts exactly the three names and round-trips
// through String.
func FuzzParseKind(f *testing.F) {
	for _, s := range []string{"dielectric", "metal", "free", "", "Metal", "free "} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		k, err := ParseKind(s)
		if err == nil && k.String() != s {
			t.Fatalf("ParseKind(%q) = %v", s, k)
		}
		if err != nil && (s == "dielectric" || s == "metal" || s == "free") {
			t.Fatalf("ParseKind(%q) failed: %v", s, err)
		}
	})
}
