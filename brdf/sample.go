package brdf

import "math"

// Sample draws a light direction wi for the view direction wo from the
// uniform numbers u in [0,1)^3: u[0] picks the lobe (specular with the
// probability SpecularProbability gives), u[1] and u[2] the direction. The
// diffuse lobe is sampled with density cos(theta)/pi; the specular lobe
// samples a microfacet normal from the GGX distribution of visible normals
// (Heitz 2018) and reflects wo about it.
//
// pdf is the combined density PDF(p, wo, wi) in 1/sr, and weight is
// Eval(p, wo, wi) * wi.Z / pdf, the throughput of the sample. ok is false
// when there is no sample: wo at or below the horizon, or a reflected
// direction below it (that probability mass is lost, so PDF integrates to
// less than 1 over the hemisphere by exactly that amount).
func Sample(p *Params, wo Vec, u [3]float64) (wi Vec, pdf float64, weight RGB, ok bool) {
	muO := wo.Z
	if !(muO > 0) {
		return Vec{}, 0, RGB{}, false
	}
	d, f0 := p.effective()
	ps := specularProbability(&d, &f0, muO)
	alpha := p.Alpha()
	if u[0] < ps {
		m := sampleVisibleNormal(alpha, wo, u[1], u[2])
		wi = m.Scale(2 * wo.Dot(m)).Sub(wo)
	} else {
		// Cosine-weighted hemisphere (Malley's method).
		r := math.Sqrt(u[1])
		s, c := math.Sincos(2 * math.Pi * u[2])
		wi = Vec{r * c, r * s, math.Sqrt(math.Max(0, 1-u[1]))}
	}
	if !(wi.Z > 0) {
		return wi, 0, RGB{}, false
	}
	f, pdf := evalPDF(&d, &f0, alpha, ps, wo, wi)
	if !(pdf > 0) {
		return wi, 0, RGB{}, false
	}
	k := wi.Z / pdf
	return wi, pdf, RGB{f[0] * k, f[1] * k, f[2] * k}, true
}

// PDF returns the density in 1/sr with which Sample draws wi given wo:
// ps * pdfSpecular + (1 - ps) * wi.Z / pi, where ps is
// SpecularProbability and pdfSpecular = G1(wo) D(h) / (4 wo.Z) is the
// visible-normal density D_wo(h) = G1(wo) max(0, wo.h) D(h) / wo.Z
// (Heitz 2018, eq. 1) times the reflection Jacobian 1 / (4 wo.h). It is zero
// when either direction is at or below the horizon.
func PDF(p *Params, wo, wi Vec) float64 {
	muO, muI := wo.Z, wi.Z
	if !(muO > 0 && muI > 0) {
		return 0
	}
	d, f0 := p.effective()
	ps := specularProbability(&d, &f0, muO)
	alpha := p.Alpha()
	a2 := alpha * alpha
	muH := halfCos(wo, wi)
	t := muH*muH*(a2-1) + 1
	dist := a2 / (math.Pi * t * t)
	so := math.Sqrt(float64(muO*muO*(1-a2)) + a2)
	return ps*dist/(2*(muO+so)) + (1-ps)*muI*(1/math.Pi)
}

// SpecularProbability returns the probability that Sample picks the
// specular lobe for the view direction wo. It is the share of the specular
// lobe in a cheap estimate of the directional albedo, summed over the
// channels: Schlick's F(wo.Z) for the specular lobe against the weighted
// diffuse albedo for the diffuse one, kept within [0.05, 0.95] when both
// lobes are present so neither is starved; 1 when there is no diffuse term.
func SpecularProbability(p *Params, wo Vec) float64 {
	if !(wo.Z > 0) {
		return 0
	}
	d, f0 := p.effective()
	return specularProbability(&d, &f0, wo.Z)
}

func specularProbability(d, f0 *RGB, muO float64) float64 {
	w := pow5(1 - clamp01(muO))
	var ws, wd float64
	for c := 0; c < 3; c++ {
		one := 1 - f0[c]
		ws += f0[c] + one*w
		wd += d[c] * one * one * (1 - w)
	}
	if !(wd > 0) {
		return 1
	}
	if !(ws > 0) {
		return 0.05
	}
	ps := ws / (ws + wd)
	return math.Min(math.Max(ps, 0.05), 0.95)
}

// evalPDF returns Eval and PDF together, sharing the half-vector work.
func evalPDF(d, f0 *RGB, alpha, ps float64, wo, wi Vec) (RGB, float64) {
	a2 := alpha * alpha
	var gm geometry
	gm.set(a2, wo, wi)
	var f RGB
	for c := 0; c < 3; c++ {
		one := 1 - f0[c]
		f[c] = d[c]*one*one*gm.kd + (f0[c]+one*gm.w)*gm.dv
	}
	dist := a2 / (math.Pi * gm.t * gm.t)
	pdf := ps*dist/(2*(wo.Z+gm.so)) + (1-ps)*wi.Z*(1/math.Pi)
	return f, pdf
}

// sampleVisibleNormal returns a microfacet normal distributed as the GGX
// distribution of normals visible from wo (Heitz 2018, listing 1).
func sampleVisibleNormal(alpha float64, wo Vec, u1, u2 float64) Vec {
	// Stretch the view into the configuration of the hemisphere (alpha 1).
	vh := Vec{alpha * wo.X, alpha * wo.Y, wo.Z}.Normalize()
	// Orthonormal basis around vh.
	lensq := vh.X*vh.X + vh.Y*vh.Y
	t1 := Vec{1, 0, 0}
	if lensq > 0 {
		inv := 1 / math.Sqrt(lensq)
		t1 = Vec{-vh.Y * inv, vh.X * inv, 0}
	}
	t2 := vh.Cross(t1)
	// Uniform point on the disk, warped onto the visible half.
	r := math.Sqrt(u1)
	s, c := math.Sincos(2 * math.Pi * u2)
	p1, p2 := r*c, r*s
	h := 0.5 * (1 + vh.Z)
	p2 = (1-h)*math.Sqrt(math.Max(0, 1-p1*p1)) + h*p2
	p3 := math.Sqrt(math.Max(0, 1-p1*p1-p2*p2))
	nh := t1.Scale(p1).Add(t2.Scale(p2)).Add(vh.Scale(p3))
	// Unstretch back to the ellipsoid configuration.
	return Vec{alpha * nh.X, alpha * nh.Y, math.Max(0, nh.Z)}.Normalize()
}
