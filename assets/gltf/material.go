package gltf

import (
	"fmt"
	"math"

	"patina/brdf"
)

// Map turns a fitted Patina material into glTF's metallic-roughness model.
//
//   - metal: metallic 1, baseColor = F0. glTF's metal BRDF is then
//     F_Schlick(baseColor) D V with the same GGX D and alpha = roughness^2 as
//     Patina's; only the masking-shadowing term differs: the specification
//     writes the separable Smith form G1(L) G1(V), Patina uses the
//     height-correlated form (Heitz 2014), which is a little brighter at
//     grazing angles and for rough surfaces.
//   - dielectric and free: metallic 0 and, through KHR_materials_ior and
//     KHR_materials_specular, the fitted F0: ior from the largest channel of
//     F0 and specularColorFactor = F0 / that channel, so glTF's dielectric F0
//     ((ior-1)/(ior+1))^2 * specularColorFactor equals Patina's F0 exactly.
//     The specular lobes then agree. The diffuse lobes do not: glTF weights
//     baseColor/pi by (1 - max(F(V.H))), Patina by
//     (1-F0)^2 (1-(1-n.v)^5) (1-(1-n.l)^5). baseColor is Patina's diffuse
//     colour times (1 - F0), which makes the two agree at normal incidence;
//     MappingError reports how far apart the two models are elsewhere, both
//     lobes together.
func Map(name string, p brdf.Params) Material {
	m := Material{Name: name, Roughness: p.Roughness}
	if p.Kind == brdf.Metal {
		m.BaseColor = [3]float64(p.Specular)
		m.Metallic = 1
		return m
	}
	f0max := math.Max(p.Specular[0], math.Max(p.Specular[1], p.Specular[2]))
	f0max = math.Min(f0max, maxDielectricF0)
	m.UseSpecularExts = true
	m.SpecularFactor = 1
	if f0max <= 0 {
		m.IOR = 1
		m.SpecularColor = [3]float64{0, 0, 0}
	} else {
		s := math.Sqrt(f0max)
		m.IOR = (1 + s) / (1 - s)
		for c := 0; c < 3; c++ {
			m.SpecularColor[c] = math.Min(1, p.Specular[c]/f0max)
		}
	}
	for c := 0; c < 3; c++ {
		m.BaseColor[c] = p.Diffuse[c] * (1 - p.Specular[c])
	}
	return m
}

// maxDielectricF0 keeps the index of refraction finite for F0 close to 1.
const maxDielectricF0 = 0.95

// EvalGLTF evaluates the glTF 2.0 BRDF (specification Appendix B, with the
// Fresnel mix of KHR_materials_specular and KHR_materials_ior) for a
// material at local directions (z = normal), without the cosine factor.
func EvalGLTF(m Material, wo, wi brdf.Vec) brdf.RGB {
	nv, nl := wo.Z, wi.Z
	if nv <= 0 || nl <= 0 {
		return brdf.RGB{}
	}
	h := brdf.Vec{X: wo.X + wi.X, Y: wo.Y + wi.Y, Z: wo.Z + wi.Z}
	hl := math.Sqrt(h.X*h.X + h.Y*h.Y + h.Z*h.Z)
	h = brdf.Vec{X: h.X / hl, Y: h.Y / hl, Z: h.Z / hl}
	vh := math.Abs(wo.X*h.X + wo.Y*h.Y + wo.Z*h.Z)
	alpha := m.Roughness * m.Roughness
	a2 := alpha * alpha
	nh := h.Z
	dd := nh*nh*(a2-1) + 1
	D := a2 / (math.Pi * dd * dd)
	// The specification's separable Smith form, V = G1(L) G1(V) / (4 n.l n.v).
	V := 1 / ((nl + math.Sqrt(a2+(1-a2)*nl*nl)) * (nv + math.Sqrt(a2+(1-a2)*nv*nv)))
	spec := D * V
	w5 := math.Pow(1-vh, 5)
	var out brdf.RGB
	if m.Metallic >= 1 {
		for c := 0; c < 3; c++ {
			out[c] = (m.BaseColor[c] + (1-m.BaseColor[c])*w5) * spec
		}
		return out
	}
	ior := m.IOR
	if !m.UseSpecularExts {
		ior = 1.5
	}
	f0ior := (ior - 1) / (ior + 1)
	f0ior *= f0ior
	var fr [3]float64
	frmax := 0.0
	for c := 0; c < 3; c++ {
		sc, sf := 1.0, 1.0
		if m.UseSpecularExts {
			sc, sf = m.SpecularColor[c], m.SpecularFactor
		}
		f0 := math.Min(1, f0ior*sc)
		fr[c] = sf * (f0 + (1-f0)*w5)
		frmax = math.Max(frmax, fr[c])
	}
	for c := 0; c < 3; c++ {
		out[c] = (1-frmax)*m.BaseColor[c]/math.Pi + fr[c]*spec
	}
	return out
}

// MappingError is the largest relative difference between Patina's model
// and the glTF BRDF of its mapping, over view and light directions with
// polar angles up to maxAngleDeg (in the plane of incidence and across it),
// relative to Patina's value.
func MappingError(p brdf.Params, maxAngleDeg float64) float64 {
	m := Map("", p)
	worst := 0.0
	for _, to := range angles(maxAngleDeg) {
		for _, ti := range angles(maxAngleDeg) {
			for _, phi := range []float64{0, math.Pi / 2, math.Pi} {
				wo := brdf.Vec{X: math.Sin(to), Z: math.Cos(to)}
				wi := brdf.Vec{X: math.Sin(ti) * math.Cos(phi), Y: math.Sin(ti) * math.Sin(phi), Z: math.Cos(ti)}
				a := brdf.Eval(&p, wo, wi)
				b := EvalGLTF(m, wo, wi)
				for c := 0; c < 3; c++ {
					if a[c] > 1e-6 {
						worst = math.Max(worst, math.Abs(b[c]-a[c])/a[c])
					}
				}
			}
		}
	}
	return worst
}

func angles(maxDeg float64) []float64 {
	var out []float64
	for d := 0.0; d <= maxDeg+1e-9; d += 10 {
		out = append(out, d*math.Pi/180)
	}
	return out
}

// Describe says in words how exactly the mapping represents p.
func Describe(p brdf.Params) string {
	e60, e80 := 100*MappingError(p, 60), 100*MappingError(p, 80)
	if p.Kind == brdf.Metal {
		return fmt.Sprintf("metal: same F0 and roughness; the Smith term's form differs by up to %.2f%% to 60 degrees, %.2f%% to 80 degrees", e60, e80)
	}
	s := fmt.Sprintf("same F0 and roughness; diffuse weighting and Smith form differ by up to %.2f%% to 60 degrees, %.2f%% to 80 degrees", e60, e80)
	if p.Specular[0] != p.Specular[1] || p.Specular[1] != p.Specular[2] {
		s += "; coloured F0 carried by specularColorFactor"
	}
	return s
}
