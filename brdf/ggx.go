package brdf

import "math"

// D returns the isotropic GGX (Trowbridge-Reitz) normal distribution of
// width alpha at a microfacet normal whose cosine with the surface normal is
// cosThetaM (Walter, Marschner, Li, Torrance 2007, eq. 33):
//
//	D(m) = alpha^2 / (pi ((n.m)^2 (alpha^2 - 1) + 1)^2)
//
// It is zero for cosThetaM <= 0. Its projected integral over the
// hemisphere, the integral of D(m) (n.m) dm, is 1.
func D(alpha, cosThetaM float64) float64 {
	if cosThetaM <= 0 {
		return 0
	}
	a2 := alpha * alpha
	t := cosThetaM*cosThetaM*(a2-1) + 1
	return a2 / (math.Pi * t * t)
}

// Lambda returns the Smith auxiliary function of GGX for a direction whose
// cosine with the normal is cosTheta (Heitz 2014, eq. 72):
//
//	Lambda = (-1 + sqrt(1 + alpha^2 tan^2 theta)) / 2
//
// evaluated in a form free of cancellation for small alpha tan theta. It is
// +Inf for cosTheta <= 0 (the direction is below the surface).
func Lambda(alpha, cosTheta float64) float64 {
	if cosTheta <= 0 {
		return math.Inf(1)
	}
	if cosTheta >= 1 {
		return 0
	}
	c2 := cosTheta * cosTheta
	x := alpha * alpha * (1 - c2) / c2 // alpha^2 tan^2 theta
	return x / (2 * (1 + math.Sqrt(1+x)))
}

// G1 returns the Smith masking function 1 / (1 + Lambda) of GGX for a
// direction with cosine cosTheta to the normal (Heitz 2014); zero
// below the surface.
func G1(alpha, cosTheta float64) float64 {
	if cosTheta <= 0 {
		return 0
	}
	return 1 / (1 + Lambda(alpha, cosTheta))
}

// G2HeightCorrelated returns the height-correlated Smith masking-shadowing
// function 1 / (1 + Lambda(wo) + Lambda(wi)) of GGX (Heitz 2014, eq. 99)
// for the cosines of the view and light directions; zero when either is
// below the surface.
func G2HeightCorrelated(alpha, cosO, cosI float64) float64 {
	if cosO <= 0 || cosI <= 0 {
		return 0
	}
	return 1 / (1 + Lambda(alpha, cosO) + Lambda(alpha, cosI))
}

// SchlickFresnel returns Schlick's approximation of Fresnel reflectance
// F0 + (1 - F0) (1 - cosTheta)^5 (Schlick 1994; glTF 2.0 Appendix B), with
// cosTheta clamped to [0, 1].
func SchlickFresnel(f0, cosTheta float64) float64 {
	return f0 + (1-f0)*pow5(1-clamp01(cosTheta))
}

func pow5(x float64) float64 {
	x2 := x * x
	return x2 * x2 * x
}

func clamp01(x float64) float64 {
	if x < 0 {
		return 0
	}
	if x > 1 {
		return 1
	}
	return x
}
