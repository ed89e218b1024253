package brdf

import (
	"math"
	"testing"
)

// GGX normalisation: the projected area of the microfacets equals the
// macro-surface area, the integral of D(m) (m.n) dm over the hemisphere is 1
// (Walter et al. 2007). Numerical quadrature in theta_m.
func TestGGXNormalisation(t *testing.T) {
	for _, alpha := range []float64{0.05, 0.1, 0.5, 1} {
		f := func(th float64) float64 {
			s, c := math.Sincos(th)
			return D(alpha, c) * c * s * 2 * math.Pi
		}
		got := integrateBreaks(f, thetaBreaks(alpha), 64)
		if math.Abs(got-1) > 1e-9 {
			t.Errorf("alpha %g: integral of D(m)(m.n) = %.12f, want 1 (Walter et al. 2007)", alpha, got)
		}
	}
}

// Heitz 2014, the visible projected area: G1(v) times the integral of
// max(0, v.m) D(m) dm equals v.n. The azimuth range where v.m > 0 is found
// in closed form so the quadrature never crosses the kink.
func TestHeitzVisibleProjectedArea(t *testing.T) {
	for _, alpha := range []float64{0.05, 0.2, 0.5, 1} {
		for _, deg := range []float64{0, 20, 45, 70, 85, 89} {
			tv := deg * math.Pi / 180
			sv, cv := math.Sincos(tv)
			inner := func(th float64) float64 {
				sm, cm := math.Sincos(th)
				// v.m = sv sm cos(phi) + cv cm > 0  <=>  cos(phi) > kappa.
				phiMax := math.Pi
				if sv*sm > 0 {
					kappa := -cv * cm / (sv * sm)
					if kappa >= 1 {
						return 0
					}
					if kappa > -1 {
						phiMax = math.Acos(kappa)
					}
				}
				g := func(phi float64) float64 {
					vm := sv*sm*math.Cos(phi) + cv*cm
					return math.Max(0, vm) * D(alpha, cm) * sm
				}
				return 2 * integrate(g, 0, phiMax, 48)
			}
			// The azimuth range stops being the full circle at
			// theta_m = pi/2 - theta_v: a kink, so a breakpoint.
			br := thetaBreaks(alpha)
			if k := math.Pi/2 - tv; k > 0 && k < math.Pi/2 {
				br = insertSorted(br, k)
			}
			area := integrateBreaks(inner, br, 48)
			got := G1(alpha, cv) * area
			if math.Abs(got-cv) > 1e-8 {
				t.Errorf("alpha %g, theta_v %g deg: G1 * integral = %.10f, want v.n = %.10f (Heitz 2014)", alpha, deg, got, cv)
			}
		}
	}
}

// The closed forms against the papers' formulas written out independently
// here in their published algebraic forms, at specific angles:
//   - D in Walter et al. 2007, eq. 33: alpha^2 / (pi cos^4 theta (alpha^2 + tan^2 theta)^2)
//   - Lambda in Heitz 2014, eq. 72: (-1 + sqrt(1 + 1/a^2)) / 2, a = 1 / (alpha tan theta)
//   - G1 in Walter et al. 2007, eq. 34: 2 / (1 + sqrt(1 + alpha^2 tan^2 theta))
//   - height-correlated G2 in Heitz 2014, eq. 99: 1 / (1 + Lambda(o) + Lambda(i))
func TestClosedFormsAgainstPapers(t *testing.T) {
	walterD := func(alpha, th float64) float64 {
		c := math.Cos(th)
		t2 := math.Tan(th) * math.Tan(th)
		return alpha * alpha / (math.Pi * c * c * c * c * (alpha*alpha + t2) * (alpha*alpha + t2))
	}
	heitzLambda := func(alpha, th float64) float64 {
		a := 1 / (alpha * math.Tan(th))
		return (-1 + math.Sqrt(1+1/(a*a))) / 2
	}
	walterG1 := func(alpha, th float64) float64 {
		return 2 / (1 + math.Sqrt(1+alpha*alpha*math.Tan(th)*math.Tan(th)))
	}
	for _, alpha := range []float64{0.01, 0.09, 0.3, 0.64, 1} {
		for _, deg := range []float64{1, 10, 30, 45, 60, 75, 85, 89.5} {
			th := deg * math.Pi / 180
			c := math.Cos(th)
			if e := relErr(D(alpha, c), walterD(alpha, th)); e > 1e-12 {
				t.Errorf("D(%g, %g deg) = %g, Walter eq. 33 gives %g", alpha, deg, D(alpha, c), walterD(alpha, th))
			}
			if l, want := Lambda(alpha, c), heitzLambda(alpha, th); math.Abs(l-want) > 1e-9*want+1e-15 {
				// The paper's form loses digits to cancellation for small
				// alpha tan theta (ours does not), hence the absolute term.
				t.Errorf("Lambda(%g, %g deg) = %g, Heitz eq. 72 gives %g", alpha, deg, Lambda(alpha, c), heitzLambda(alpha, th))
			}
			if e := relErr(G1(alpha, c), walterG1(alpha, th)); e > 1e-12 {
				t.Errorf("G1(%g, %g deg) = %g, Walter eq. 34 gives %g", alpha, deg, G1(alpha, c), walterG1(alpha, th))
			}
			for _, deg2 := range []float64{0.5, 30, 80} {
				th2 := deg2 * math.Pi / 180
				want := 1 / (1 + heitzLambda(alpha, th) + heitzLambda(alpha, th2))
				if got := G2HeightCorrelated(alpha, c, math.Cos(th2)); relErr(got, want) > 1e-9 {
					t.Errorf("G2(%g, %g, %g deg) = %g, Heitz eq. 99 gives %g", alpha, deg, deg2, got, want)
				}
			}
		}
	}
	// Worked values computed by hand from the formulas: alpha = 1 makes D
	// the constant 1/pi, and at theta = 60 deg tan^2 = 3, so
	// Lambda = (-1 + sqrt(4)) / 2 = 0.5 and G1 = 2/3.
	if got := D(1, 0.3); math.Abs(got-1/math.Pi) > 1e-15 {
		t.Errorf("D(1, .) = %g, want 1/pi", got)
	}
	if got := Lambda(1, 0.5); math.Abs(got-0.5) > 1e-15 {
		t.Errorf("Lambda(1, 60 deg) = %g, want 0.5", got)
	}
	if got := G1(1, 0.5); math.Abs(got-2.0/3) > 1e-15 {
		t.Errorf("G1(1, 60 deg) = %g, want 2/3", got)
	}
	// Below the surface the masking is total (Heitz 2014, the chi+ factor).
	if G1(0.5, -0.1) != 0 || G2HeightCorrelated(0.5, 0.5, -0.1) != 0 || D(0.5, -0.2) != 0 {
		t.Error("terms below the horizon must be zero")
	}
}

// Schlick 1994 (as in glTF 2.0 Appendix B): F0 at normal
// incidence, 1 at grazing, and the hand value F0 + (1-F0) 0.5^5 at cos 0.5.
func TestSchlickFresnel(t *testing.T) {
	if got := SchlickFresnel(0.04, 1); got != 0.04 {
		t.Errorf("normal incidence: %g, want 0.04", got)
	}
	if got := SchlickFresnel(0.04, 0); got != 1 {
		t.Errorf("grazing: %g, want 1", got)
	}
	if got, want := SchlickFresnel(0.2, 0.5), 0.2+0.8/32; math.Abs(got-want) > 1e-16 {
		t.Errorf("cos 0.5: %g, want %g", got, want)
	}
}
