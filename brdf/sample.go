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
	// Both lobes start from the same uniform point on the unit disk.
	// (The hot path is written out in one function: calls cost more than
	// the arithmetic here, since every live value is spilled around them.)
	r := math.Sqrt(u[1])
	sn, cs := sincos2pi(u[2])
	p1, p2 := r*cs, r*sn

	d0, d1, d2, s0, s1, s2 := p.coeffs()
	// SpecularProbability, written out.
	w5 := pow5(1 - unit(muO))
	o0, o1, o2 := 1-s0, 1-s1, 1-s2
	ps := lobeShare(s0+s1+s2+(o0+o1+o2)*w5, (d0*o0*o0+d1*o1*o1+d2*o2*o2)*(1-w5))

	alpha := p.Alpha()
	if u[0] < ps {
		// Visible normal (Heitz 2018, listing 1). Stretch the view into
		// the configuration of the hemisphere (alpha 1).
		vx, vy, vz := alpha*wo.X, alpha*wo.Y, wo.Z
		// Orthonormal basis (t1, t2, vh); t1 is perpendicular to the plane
		// of wo and the normal, which stretching does not change. One
		// division serves both normalisations.
		t1x, t1y := 1.0, 0.0
		sxy := wo.X*wo.X + wo.Y*wo.Y
		sl := math.Sqrt(vx*vx + vy*vy + vz*vz)
		if sxy > 0 {
			sq := math.Sqrt(sxy)
			inv := 1 / (sq * sl)
			k := sl * inv // 1 / sqrt(sxy)
			t1x, t1y = -wo.Y*k, wo.X*k
			sl = sq * inv // now 1 / |v|
		} else {
			sl = 1 / sl
		}
		vx, vy, vz = vx*sl, vy*sl, vz*sl
		t2x, t2y, t2z := -vz*t1y, vz*t1x, vx*t1y-vy*t1x // vh x t1
		// Warp the disk point onto the visible half of the hemisphere.
		h := 0.5 * (1 + vz)
		e := 1 - p1*p1
		if e < 0 {
			e = 0
		}
		q2 := (1-h)*math.Sqrt(e) + h*p2
		e -= q2 * q2
		if e < 0 {
			e = 0
		}
		p3 := math.Sqrt(e)
		nx := p1*t1x + q2*t2x + p3*vx
		ny := p1*t1y + q2*t2y + p3*vy
		nz := q2*t2z + p3*vz
		if nz < 0 {
			nz = 0
		}
		// Unstretch to the normal m (not normalised), then reflect:
		// wi = 2 (wo.m) m / |m|^2 - wo.
		mx, my, mz := alpha*nx, alpha*ny, nz
		m2 := mx*mx + my*my + mz*mz
		if !(m2 > 0) {
			return Vec{}, 0, RGB{}, false
		}
		k := 2 * (wo.X*mx + wo.Y*my + wo.Z*mz) / m2
		wi = Vec{k*mx - wo.X, k*my - wo.Y, k*mz - wo.Z}
	} else {
		// Cosine-weighted hemisphere (Malley's method).
		z := 1 - u[1]
		if z < 0 {
			z = 0
		}
		wi = Vec{p1, p2, math.Sqrt(z)}
	}
	if !(wi.Z > 0) {
		return wi, 0, RGB{}, false
	}
	// With D V = x / (p den) and S = muO + so,
	//   pdf      = ps x / (p S) + (1 - ps) muI / pi = n / (pi p S den),
	//   n        = pi ps x den + (1 - ps) muI p S den,
	//   f_c      = (diff_c p den + spec_c x) / (p den),
	//   weight_c = f_c muI / pdf = (diff_c p den + spec_c x) muI pi S / n,
	// so one division, r = 1 / (n pi p S den), gives both pdf = n^2 r and
	// 1 / n = (pi p S den) r: one division instead of three.
	var gm geometry
	gm.prepare(alpha*alpha, wo, wi)
	muI := wi.Z
	pd := gm.p * gm.den
	t := math.Pi * (muO + gm.so) * pd
	n := math.Pi*ps*gm.x*gm.den + (1-ps)*muI*(muO+gm.so)*pd
	rr := 1 / (n * t)
	pdf = n * n * rr
	if !(pdf > 0) || math.IsInf(rr, 0) {
		return wi, 0, RGB{}, false
	}
	k := muI * math.Pi * (muO + gm.so) * t * rr
	w0, w1, w2 := gm.parts(d0, s0, pd), gm.parts(d1, s1, pd), gm.parts(d2, s2, pd)
	return wi, pdf, RGB{w0 * k, w1 * k, w2 * k}, true
}

// parts returns diff p den + spec x for one channel (see Sample).
func (g *geometry) parts(d, f0, pd float64) float64 {
	one := 1 - f0
	return d*one*one*g.kd*pd + (f0+one*g.w)*g.x
}

// PDF returns the density in 1/sr with which Sample draws wi given wo:
// ps * pdfSpecular + (1 - ps) * wi.Z / pi, where ps is
// SpecularProbability and pdfSpecular = G1(wo) D(h) / (4 wo.Z) is the
// visible-normal density D_wo(h) = G1(wo) max(0, wo.h) D(h) / wo.Z
// (Heitz 2018) times the reflection Jacobian 1 / (4 wo.h). It is zero
// when either direction is at or below the horizon.
func PDF(p *Params, wo, wi Vec) float64 {
	muO, muI := wo.Z, wi.Z
	if !(muO > 0 && muI > 0) {
		return 0
	}
	d0, d1, d2, s0, s1, s2 := p.coeffs()
	ps := specularProbability(d0, d1, d2, s0, s1, s2, muO)
	a2 := p.alpha2()
	// D as in geometry.set: alpha^2 |H|^4 / (pi q^2), H = wo + wi.
	hx, hy, hz := wo.X+wi.X, wo.Y+wi.Y, muO+muI
	hxy := float64(hx*hx) + float64(hy*hy)
	l2 := hxy + hz*hz
	q := hxy + a2*(hz*hz)
	so := math.Sqrt(float64(muO*muO*(1-a2)) + a2)
	return ps*a2*l2*l2/(2*math.Pi*q*q*(muO+so)) + (1-ps)*muI*(1/math.Pi)
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
	d0, d1, d2, s0, s1, s2 := p.coeffs()
	return specularProbability(d0, d1, d2, s0, s1, s2, wo.Z)
}

func specularProbability(d0, d1, d2, s0, s1, s2, muO float64) float64 {
	w := pow5(1 - unit(muO))
	o0, o1, o2 := 1-s0, 1-s1, 1-s2
	return lobeShare(s0+s1+s2+(o0+o1+o2)*w, (d0*o0*o0+d1*o1*o1+d2*o2*o2)*(1-w))
}

// lobeShare returns the specular probability for the specular and diffuse
// albedo estimates ws and wd.
func lobeShare(ws, wd float64) float64 {
	if !(wd > 0) {
		return 1
	}
	if !(ws > 0) {
		return 0.05
	}
	ps := ws / (ws + wd)
	if !(ps > 0.05) {
		ps = 0.05
	} else if ps > 0.95 {
		ps = 0.95
	}
	return ps
}
