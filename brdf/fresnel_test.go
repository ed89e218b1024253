package brdf

import (
	"math"
	"testing"
)

// Fresnel equations for a dielectric (any optics handbook; values as in
// the project's REFERENCES): n = 1.5 reflects 0.04 at normal incidence,
// Rp vanishes at Brewster's angle atan(1.5) = 56.3099 deg, and at 45 deg
// Rs = 0.092013, Rp = 0.008466 (computed from the equations).
func TestFresnelDielectricPublishedValues(t *testing.T) {
	rs, rp := FresnelDielectric(1, 1.5)
	if math.Abs(rs-0.04) > 1e-15 || math.Abs(rp-0.04) > 1e-15 {
		t.Errorf("normal incidence n=1.5: rs %g rp %g, want 0.04", rs, rp)
	}
	if got := F0FromIOR(1.5); math.Abs(got-0.04) > 1e-16 {
		t.Errorf("F0FromIOR(1.5) = %g, want 0.04 (glTF 2.0 Appendix B)", got)
	}
	brewster := math.Atan(1.5)
	if deg := brewster * 180 / math.Pi; math.Abs(deg-56.3099) > 5e-5 {
		t.Fatalf("Brewster angle %g deg, want 56.3099", deg)
	}
	_, rp = FresnelDielectric(math.Cos(brewster), 1.5)
	if rp > 1e-30 {
		t.Errorf("Rp at Brewster's angle = %g, want 0", rp)
	}
	rs, rp = FresnelDielectric(math.Cos(math.Pi/4), 1.5)
	if math.Abs(rs-0.092013) > 5e-7 || math.Abs(rp-0.008466) > 5e-7 {
		t.Errorf("45 deg: rs %.6f rp %.6f, want 0.092013 0.008466", rs, rp)
	}
	// Total internal reflection from glass to air beyond the critical
	// angle asin(1/1.5) = 41.81 deg (Snell's law).
	rs, rp = FresnelDielectric(math.Cos(45*math.Pi/180), 1/1.5)
	if rs != 1 || rp != 1 {
		t.Errorf("beyond the critical angle: rs %g rp %g, want 1", rs, rp)
	}
	// Round trip of F0 <-> ior.
	if got := IORFromF0(F0FromIOR(1.5168)); math.Abs(got-1.5168) > 1e-12 {
		t.Errorf("IORFromF0(F0FromIOR(1.5168)) = %g", got)
	}
}

// A conductor's normal-incidence reflectance from (n, k):
// R = ((n-1)^2 + k^2) / ((n+1)^2 + k^2); gold at 548.6 nm, n = 0.43,
// k = 2.455 (Johnson and Christy 1972, via refractiveindex.info) gives
// 0.7869.
func TestConductorF0Gold(t *testing.T) {
	if got := ConductorF0(0.43, 2.455); math.Abs(got-0.7869) > 5e-5 {
		t.Errorf("gold F0 = %.5f, want 0.7869", got)
	}
	rs, rp := FresnelConductor(1, 0.43, 2.455)
	if math.Abs(rs-ConductorF0(0.43, 2.455)) > 1e-12 || math.Abs(rp-rs) > 1e-12 {
		t.Errorf("FresnelConductor at normal incidence: rs %g rp %g, want %g", rs, rp, ConductorF0(0.43, 2.455))
	}
	g, _ := PresetByName("gold")
	if math.Abs(g.Params.Specular[1]-0.7869) > 5e-5 {
		t.Errorf("gold preset green F0 = %.5f, want 0.7869", g.Params.Specular[1])
	}
}

// The complex-index Fresnel equations against the real-arithmetic closed
// form for a conductor in air (Born and Wolf, Principles of Optics; the
// same form is in Physically Based Rendering, 3rd ed., section 8.2, from
// memory):
//
//	a^2 + b^2 = sqrt((n^2 - k^2 - sin^2)^2 + 4 n^2 k^2)
//	a = sqrt((a^2 + b^2 + n^2 - k^2 - sin^2) / 2)
//	Rs = (a^2+b^2 - 2a cos + cos^2) / (a^2+b^2 + 2a cos + cos^2)
//	Rp = Rs (a^2+b^2 - 2a sin tan + sin^2 tan^2) / (a^2+b^2 + 2a sin tan + sin^2 tan^2)
//
// and with k = 0 it must reduce to the dielectric equations.
func TestFresnelConductorClosedForm(t *testing.T) {
	closed := func(ci, n, k float64) (float64, float64) {
		s2 := 1 - ci*ci
		si := math.Sqrt(s2)
		tn := si / ci
		t0 := n*n - k*k - s2
		a2b2 := math.Sqrt(t0*t0 + 4*n*n*k*k)
		a := math.Sqrt(0.5 * (a2b2 + t0))
		rs := (a2b2 - 2*a*ci + ci*ci) / (a2b2 + 2*a*ci + ci*ci)
		rp := rs * (a2b2 - 2*a*si*tn + s2*tn*tn) / (a2b2 + 2*a*si*tn + s2*tn*tn)
		return rs, rp
	}
	for _, nk := range [][2]float64{{0.43, 2.455}, {0.14, 3.697}, {1.38, 1.914}, {0.05, 4.483}, {1.5724, 7.7354}} {
		for _, deg := range []float64{0, 15, 30, 45, 60, 75, 85, 89} {
			ci := math.Cos(deg * math.Pi / 180)
			rs, rp := FresnelConductor(ci, nk[0], nk[1])
			ws, wp := closed(ci, nk[0], nk[1])
			if math.Abs(rs-ws) > 1e-12 || math.Abs(rp-wp) > 1e-12 {
				t.Errorf("n %g k %g at %g deg: rs %g rp %g, closed form %g %g", nk[0], nk[1], deg, rs, rp, ws, wp)
			}
		}
	}
	for _, deg := range []float64{0, 30, 45, 56.3, 80} {
		ci := math.Cos(deg * math.Pi / 180)
		rs, rp := FresnelConductor(ci, 1.5, 0)
		ds, dp := FresnelDielectric(ci, 1.5)
		if math.Abs(rs-ds) > 1e-14 || math.Abs(rp-dp) > 1e-14 {
			t.Errorf("k = 0 at %g deg: conductor %g %g, dielectric %g %g", deg, rs, rp, ds, dp)
		}
	}
}
