package brdf

import (
	"math"
	"testing"
)

// White furnace (common practice): under uniform unit radiance the reflected radiance is
// the directional albedo, which must not exceed 1 for any parameter in
// range. The grid includes the worst case of the diffuse weighting (white
// diffuse with F0 = 0) and F0 = 1 with white diffuse.
func TestWhiteFurnace(t *testing.T) {
	worst := 0.0
	for _, kind := range []Kind{Free, Dielectric} {
		for _, f0 := range []float64{0, 0.02, 0.04, 0.2, 0.5, 0.9, 1} {
			for _, r := range []float64{0.05, 0.1, 0.2, 0.35, 0.5, 0.7, 0.85, 1} {
				p := Params{Kind: kind, Diffuse: RGB{1, 1, 1}, Specular: RGB{f0, f0, f0}, Roughness: r}
				for _, deg := range []float64{0, 10, 30, 45, 60, 75, 85, 89} {
					a := albedoH(func(wo, wi Vec) float64 { return Eval(&p, wo, wi)[0] }, deg*math.Pi/180, p.Alpha(), 24)
					if f0 < 1 {
						worst = math.Max(worst, a)
					}
					if a > 1+1e-6 {
						t.Errorf("%s F0 %g r %g at %g deg: directional albedo %.6f > 1", kind, f0, r, deg, a)
					}
				}
			}
		}
	}
	t.Logf("largest directional albedo on the grid with F0 < 1: %.6f", worst)
}

// The furnace quadrature must be able to fail. It integrates a Lambertian
// lobe of albedo 1 to exactly 1 (the cosine integral, pi), and it finds
// the glTF 2.0 Appendix B weighting (1 - F(v.h)) c_diff / pi + F D V with
// separable Smith G, written out here, above 1 at grazing view angles:
// that weighting is not energy conserving, which is why Patina does not
// use it.
func TestFurnaceQuadratureCanFail(t *testing.T) {
	lambert := func(wo, wi Vec) float64 { return 1 / math.Pi }
	for _, deg := range []float64{0, 45, 89} {
		if a := albedoH(lambert, deg*math.Pi/180, 0.1, 24); math.Abs(a-1) > 1e-6 {
			t.Errorf("Lambertian albedo at %g deg = %.12f, want 1", deg, a)
		}
	}
	r := 0.2
	alpha := r * r
	gltf := func(wo, wi Vec) float64 {
		c := gltfBRDF(RGB{1, 1, 1}, 0, r, wo, wi)
		return c[0]
	}
	if a := albedoH(gltf, 89*math.Pi/180, alpha, 24); a <= 1 {
		t.Errorf("glTF weighting at 89 deg: albedo %.6f, expected above 1", a)
	} else {
		t.Logf("glTF 2.0 Appendix B weighting, white base colour, r %g, 89 deg: albedo %.4f", r, a)
	}
}

// With F0 = 1 and no diffuse term the directional albedo is the
// single-scattering albedo of the GGX lobe. Eval integrated over light
// directions must match the same quantity written in microfacet-normal
// space from the papers: the integral over h of D_wo(h) G2 / G1(wo), with
// the visible-normal distribution D_wo(h) = G1(wo) max(0, wo.h) D(h) / wo.n
// (Heitz 2014, eq. 99; Heitz 2018). The two integrals use
// different variables, parameterisations and code.
func TestSingleScatteringAlbedo(t *testing.T) {
	for _, r := range []float64{0.3, 0.5, 0.7, 1} {
		alpha := r * r
		p := Params{Kind: Metal, Specular: RGB{1, 1, 1}, Roughness: r}
		for _, deg := range []float64{0, 30, 60, 80} {
			to := deg * math.Pi / 180
			so, co := math.Sincos(to)
			wo := Vec{so, 0, co}
			// Light directions: (cos theta_i, phi) with breakpoints at the
			// mirror direction, where the lobe peaks.
			muBreaks := []float64{0, 0.5, 0.9, 0.98, 1}
			if co > 0.02 && co < 0.98 {
				muBreaks = []float64{0, co - 0.02, co, co + 0.02, 1}
			}
			phiBreaks := []float64{0, math.Pi - 0.3, math.Pi - 0.05, math.Pi}
			eval := integrateBreaks(func(mu float64) float64 {
				st := math.Sqrt(1 - mu*mu)
				return 2 * integrateBreaks(func(phi float64) float64 {
					sp, cp := math.Sincos(phi)
					return Eval(&p, wo, Vec{st * cp, st * sp, mu})[0] * mu
				}, phiBreaks, 96)
			}, muBreaks, 96)
			// Microfacet-normal space, formulas of the papers.
			paper := albedoH(func(wo, wi Vec) float64 {
				h := wo.Add(wi).Normalize()
				dwo := G1(alpha, wo.Z) * math.Max(0, wo.Dot(h)) * D(alpha, h.Z) / wo.Z
				g2 := G2HeightCorrelated(alpha, wo.Z, wi.Z) / G1(alpha, wo.Z)
				// albedoH multiplies by wi.Z * 4 (wo.h): undo it, since this
				// integrand is already a density over h.
				return dwo * g2 / (wi.Z * 4 * wo.Dot(h))
			}, to, alpha, 48)
			if math.Abs(eval-paper) > 1e-7 {
				t.Errorf("r %g at %g deg: albedo of Eval %.7f, single-scattering integral %.7f", r, deg, eval, paper)
			}
			if paper > 1 {
				t.Errorf("r %g at %g deg: single-scattering albedo %.7f > 1", r, deg, paper)
			}
		}
	}
}
