package brdf

import (
	"math"
	"testing"
)

// gltfBRDF is the metallic-roughness BRDF of the glTF 2.0 specification,
// Appendix B (section B.3, "Implementation"), written out from the text:
//
//	c_diff = lerp(baseColor, black, metallic)
//	F0     = lerp(0.04, baseColor, metallic)
//	alpha  = roughness^2
//	F      = F0 + (1 - F0) (1 - |V.H|)^5
//	f_diffuse  = (1 - F) (1/pi) c_diff
//	f_specular = F D V
//	D = alpha^2 chi+(N.H) / (pi ((N.H)^2 (alpha^2 - 1) + 1)^2)
//	V = chi+(H.L) / (|N.L| + sqrt(alpha^2 + (1 - alpha^2)(N.L)^2))
//	  * chi+(H.V) / (|N.V| + sqrt(alpha^2 + (1 - alpha^2)(N.V)^2))
//
// (V is the separable form of the Smith joint masking-shadowing function
// divided by 4 |N.L| |N.V|.) wo is V, wi is L, the normal is +z.
func gltfBRDF(base RGB, metallic, roughness float64, wo, wi Vec) RGB {
	f, _, _ := gltfLobes(base, metallic, roughness, wo, wi)
	return f
}

func gltfLobes(base RGB, metallic, roughness float64, wo, wi Vec) (f, diffuse, specular RGB) {
	n := Vec{0, 0, 1}
	h := wo.Add(wi).Normalize()
	alpha := roughness * roughness
	a2 := alpha * alpha
	nh, nl, nv := n.Dot(h), n.Dot(wi), n.Dot(wo)
	vh, hl := wo.Dot(h), h.Dot(wi)
	chi := func(x float64) float64 {
		if x > 0 {
			return 1
		}
		return 0
	}
	d := a2 * chi(nh) / (math.Pi * math.Pow(nh*nh*(a2-1)+1, 2))
	v := chi(hl) / (math.Abs(nl) + math.Sqrt(a2+(1-a2)*nl*nl)) *
		chi(vh) / (math.Abs(nv) + math.Sqrt(a2+(1-a2)*nv*nv))
	for c := 0; c < 3; c++ {
		cdiff := base[c] * (1 - metallic)
		f0 := 0.04*(1-metallic) + base[c]*metallic
		F := f0 + (1-f0)*math.Pow(1-math.Abs(vh), 5)
		diffuse[c] = (1 - F) / math.Pi * cdiff
		specular[c] = F * d * v
		f[c] = diffuse[c] + specular[c]
	}
	return
}

// glTF 2.0 Appendix B against Patina at the equivalent parameters
// (Free kind, Diffuse = c_diff, Specular = F0, same roughness).
//
// The models agree by construction in D, in Schlick's F on V.H, in
// alpha = roughness^2 and in the 1/pi Lambertian normalisation, and differ
// in two documented places: Patina's masking is the height-correlated Smith
// G2 (Heitz 2014, eq. 99) where glTF uses the separable product G1 G1, and
// Patina weights the diffuse lobe by (1 - S(muO)) (1 - S(muI)) where glTF
// uses (1 - F(V.H)). So:
//   - a metal seen along the normal (G1(n) = 1 makes both masking forms
//     equal) must match the full glTF BRDF exactly;
//   - in general Patina's specular lobe equals glTF's times G2 / (G1 G1),
//     and its diffuse lobe glTF's times the ratio of the weightings.
func TestGLTFAppendixB(t *testing.T) {
	dirs := []Vec{
		Spherical(0, 0), Spherical(0.3, 1), Spherical(0.7, 2.5), Spherical(1.2, -0.4),
		Spherical(1.5, 3), Spherical(0.5, math.Pi),
	}
	bases := []RGB{{0.9, 0.6, 0.2}, {0.5, 0.5, 0.5}, {0.05, 0.3, 0.95}}
	for _, base := range bases {
		for _, rough := range []float64{0.15, 0.4, 0.8, 1} {
			// Metal along the normal: the whole BRDF matches.
			metal := Params{Kind: Metal, Specular: base, Roughness: rough}
			for _, wi := range dirs {
				got := Eval(&metal, Vec{0, 0, 1}, wi)
				want := gltfBRDF(base, 1, rough, Vec{0, 0, 1}, wi)
				for c := 0; c < 3; c++ {
					if relErr(got[c], want[c]) > 1e-12 {
						t.Errorf("metal base %v r %g wi %v: Eval %g, glTF %g", base, rough, wi, got[c], want[c])
					}
				}
			}
			// General configurations and metallic values.
			for _, metallic := range []float64{0, 0.5, 1} {
				var p Params
				p.Kind = Free
				p.Roughness = rough
				for c := 0; c < 3; c++ {
					p.Diffuse[c] = base[c] * (1 - metallic)
					p.Specular[c] = 0.04*(1-metallic) + base[c]*metallic
				}
				for _, wo := range dirs {
					for _, wi := range dirs {
						_, gd, gs := gltfLobes(base, metallic, rough, wo, wi)
						d, s := EvalLobes(&p, wo, wi)
						alpha := rough * rough
						maskRatio := G2HeightCorrelated(alpha, wo.Z, wi.Z) / (G1(alpha, wo.Z) * G1(alpha, wi.Z))
						vh := wo.Dot(wo.Add(wi).Normalize())
						for c := 0; c < 3; c++ {
							f0 := p.Specular[c]
							so := SchlickFresnel(f0, wo.Z)
							si := SchlickFresnel(f0, wi.Z)
							weightRatio := (1 - so) * (1 - si) / (1 - SchlickFresnel(f0, vh))
							if relErr(s[c], gs[c]*maskRatio) > 1e-12 {
								t.Errorf("specular base %v metallic %g r %g: Patina %g, glTF %g x G2/(G1 G1) = %g", base, metallic, rough, s[c], gs[c], gs[c]*maskRatio)
							}
							if relErr(d[c], gd[c]*weightRatio) > 1e-12 {
								t.Errorf("diffuse base %v metallic %g r %g: Patina %g, glTF %g x weight ratio = %g", base, metallic, rough, d[c], gd[c], gd[c]*weightRatio)
							}
							if f := Eval(&p, wo, wi)[c]; relErr(f, d[c]+s[c]) > 1e-14 {
								t.Errorf("Eval %g != EvalLobes sum %g", f, d[c]+s[c])
							}
						}
					}
				}
			}
		}
	}
}
