package brdf

import (
	"math"
	"math/cmplx"
)

// FresnelDielectric returns the s- and p-polarised reflectances of light
// arriving at cosine cosI (to the normal) on an interface whose relative
// index of refraction is eta = n_transmitted / n_incident, from the Fresnel
// equations. Beyond the critical angle (eta < 1) both are 1. cosI is clamped
// to [0, 1]. The unpolarised reflectance is (rs + rp) / 2.
func FresnelDielectric(cosI, eta float64) (rs, rp float64) {
	cosI = clamp01(cosI)
	sin2T := (1 - cosI*cosI) / (eta * eta)
	if sin2T >= 1 {
		return 1, 1
	}
	cosT := math.Sqrt(1 - sin2T)
	s := (cosI - eta*cosT) / (cosI + eta*cosT)
	p := (eta*cosI - cosT) / (eta*cosI + cosT)
	return s * s, p * p
}

// FresnelConductor returns the s- and p-polarised reflectances at cosine
// cosI for light arriving from a medium of index 1 on a conductor of
// complex index n + ik (k >= 0 the extinction coefficient), from the Fresnel
// equations with a complex refractive index (Born and Wolf, Principles of
// Optics, the optics of metals). With k = 0 it equals
// FresnelDielectric(cosI, n).
func FresnelConductor(cosI, n, k float64) (rs, rp float64) {
	cosI = clamp01(cosI)
	eta := complex(n, k)
	ci := complex(cosI, 0)
	sin2I := complex(1-cosI*cosI, 0)
	cosT := cmplx.Sqrt(1 - sin2I/(eta*eta))
	s := (ci - eta*cosT) / (ci + eta*cosT)
	p := (eta*ci - cosT) / (eta*ci + cosT)
	as, ap := cmplx.Abs(s), cmplx.Abs(p)
	return as * as, ap * ap
}

// ConductorF0 returns the normal-incidence reflectance of a conductor of
// complex index n + ik in air: ((n-1)^2 + k^2) / ((n+1)^2 + k^2).
func ConductorF0(n, k float64) float64 {
	return ((n-1)*(n-1) + k*k) / ((n+1)*(n+1) + k*k)
}

// F0FromIOR returns the normal-incidence reflectance of a dielectric of
// index of refraction ior in air: ((ior-1)/(ior+1))^2. ior 1.5 gives 0.04,
// the glTF 2.0 default.
func F0FromIOR(ior float64) float64 {
	r := (ior - 1) / (ior + 1)
	return r * r
}

// IORFromF0 inverts F0FromIOR for 0 <= f0 < 1, giving the index (>= 1) of
// the dielectric with that normal-incidence reflectance.
func IORFromF0(f0 float64) float64 {
	s := math.Sqrt(clamp01(f0))
	return (1 + s) / (1 - s)
}
