package brdf

import (
	"math"
	"testing"
)

// sincos2pi against the standard library's math.Sincos over [0, 1) and a
// few periods beyond it. The reference argument 2 pi u is carried in two
// parts (hi + lo, the rounding error of the product recovered with an
// FMA and the tail of 2 pi, 2.4492935982947064e-16) and corrected to first
// order, sin(hi + lo) = sin(hi) + cos(hi) lo, so it is good to a few 1e-17.
func TestSincos2pi(t *testing.T) {
	worst := 0.0
	for i := -5000; i <= 25000; i++ {
		u := float64(i)/10000 + 1.234e-5
		s, c := sincos2pi(u)
		v := u - math.Floor(u)
		hi := 2 * math.Pi * v
		lo := math.FMA(2*math.Pi, v, -hi) + 2.4492935982947064e-16*v
		ws, wc := math.Sincos(hi)
		ws, wc = ws+wc*lo, wc-ws*lo
		worst = math.Max(worst, math.Max(math.Abs(s-ws), math.Abs(c-wc)))
	}
	t.Logf("largest difference from math.Sincos: %.3g", worst)
	if worst > 1e-15 { // a few ulps; an error in the series would show at 1e-12
		t.Errorf("largest difference from math.Sincos: %g", worst)
	}
	if s, c := sincos2pi(math.NaN()); !math.IsNaN(s) || !math.IsNaN(c) {
		t.Errorf("NaN gives %g %g", s, c)
	}
}

// Sample writes sincos2pi out; this keeps the copy in step with the
// function the test above checks: the diffuse lobe's direction is
// (sqrt(u1) cos, sqrt(u1) sin, sqrt(1 - u1)) of 2 pi u2 bit for bit.
func TestSampleUsesSincos2pi(t *testing.T) {
	p := Params{Kind: Dielectric, Diffuse: RGB{0.8, 0.8, 0.8}, Specular: RGB{0.04, 0.04, 0.04}, Roughness: 0.5}
	for i := 0; i < 1000; i++ {
		u := [3]float64{0.999, float64(i)/1000 + 3e-4, float64(i*7919%1000)/1000 + 1e-4}
		wi, _, _, ok := Sample(&p, Vec{0, 0, 1}, u)
		s, c := sincos2pi(u[2])
		r := math.Sqrt(u[1])
		if !ok || wi.X != r*c || wi.Y != r*s {
			t.Fatalf("u %v: wi %v, want (%g, %g, .)", u, wi, r*c, r*s)
		}
	}
}
