// Package brdf is Patina's reflectance model: a Lambertian diffuse lobe
// plus a GGX microfacet specular lobe, with analytic parameter gradients for
// the fit, importance sampling with an exact pdf for the path tracer, exact
// Fresnel equations and a table of preset materials from published optical
// constants. It imports nothing else of the project.
//
// # Conventions
//
// Directions are Vec values in the local shading frame: z is the surface
// normal. wo points towards the viewer, wi towards the light; both are unit
// vectors. Eval returns the BRDF f(wo, wi) in 1/sr WITHOUT the cosine
// factor wi.Z, and zero when either direction is at or below the horizon.
//
// Colours are linear RGB with sRGB / Rec. 709 primaries. Diffuse is the
// Lambertian albedo, Specular is F0 (reflectance at normal incidence), both
// in [0, 1]. Roughness is the perceptual roughness r in [0, 1]; the GGX width
// is alpha = r^2, the glTF 2.0 convention (never alpha = sqrt(r)). r is
// raised to MinRoughness before use.
//
// The model kinds are those of the capture format: Dielectric (diffuse
// colour and one scalar F0), Metal (F0 colour, no diffuse) and Free. The
// optimiser works on Params.Vector, whose order is:
//
//	dielectric [dr dg db f0 r]
//	metal      [sr sg sb r]
//	free       [dr dg db sr sg sb r]
//
// # Model
//
// For each channel c, with h the half vector of wo and wi,
// muO = wo.Z, muI = wi.Z and F0 = Specular[c]:
//
//	f_c = d_c/pi (1-F0)^2 (1 - (1-muO)^5) (1 - (1-muI)^5)      diffuse
//	    + F(wo.h) D(h) G2(wo, wi) / (4 muO muI)                specular
//	F(x) = F0 + (1-F0) (1-x)^5                                 Schlick 1994
//
// D is the GGX distribution (Walter et al. 2007), G2 the height-correlated
// Smith masking-shadowing function (Heitz 2014).
//
// The diffuse weight is the product of (1 - S(muO)) and (1 - S(muI)), where
// S(mu) = F0 + (1-F0)(1-mu)^5 is Schlick's reflectance at the normal
// cosine: light that the specular interface reflects on the way in, or
// would reflect on the way out, is taken from the diffuse lobe. Being a
// product of one factor per direction it is reciprocal, and it does not
// depend on the microfacet normal, so Eval needs no table of directional
// albedos. It keeps the directional albedo at or below 1 for every
// parameter in range. Because the specular albedo is linear in F0 and at
// most 1 for F0 = 1, the worst case is F0 = 0 with a white diffuse colour,
// where the specular albedo plus (1 - S(muO)) times the cosine-weighted mean
// of (1 - S(muI)), 20/21, must stay below 1; the white furnace test checks
// it over a grid of F0, roughness and angle (largest albedo 0.981 for
// F0 < 1). The price is a darker diffuse lobe than glTF 2.0's (1 - F(v.h))
// weighting, about 8% at normal incidence for F0 = 0.04; that weighting,
// however, reflects more than it receives at grazing angles (the test finds
// an albedo of 1.5 at 89 degrees). A fit absorbs the difference into the
// diffuse colour.
//
// # Sampling
//
// Sample picks the specular lobe with SpecularProbability(p, wo), sampling
// the GGX distribution of visible normals (Heitz 2018), and otherwise the
// cosine-weighted hemisphere. PDF is the density of that one-sample mixture,
// so multiple importance sampling with it is exact. Reflected directions
// that fall below the horizon are reported as failed samples (ok false): the
// integral of PDF over the hemisphere is 1 minus the probability of that.
//
// # Sources
//
//   - B. Walter, S. R. Marschner, H. Li, K. E. Torrance, Microfacet models
//     for refraction through rough surfaces, EGSR 2007 (GGX D).
//   - E. Heitz, Understanding the masking-shadowing function in
//     microfacet-based BRDFs, JCGT 3(2), 2014 (Lambda, G1, height-correlated G2).
//   - E. Heitz, Sampling the GGX distribution of visible normals, JCGT 7(4),
//     2018 (visible-normal sampling and its pdf).
//   - C. Schlick, An inexpensive BRDF model for physically-based rendering,
//     Computer Graphics Forum 13(3), 1994 (Fresnel approximation).
//   - Khronos, glTF 2.0 specification, Appendix B (alpha = r^2, F0 = 0.04
//     for ior 1.5, the reference metallic-roughness BRDF).
//   - The Fresnel equations for dielectrics and conductors (Born and Wolf,
//     Principles of Optics), and the optical constants named by each Preset.
package brdf
