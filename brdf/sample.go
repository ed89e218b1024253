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
// less than 1 over the hemisphere by exactly that amount). Then pdf is 0
// and weight is zero; ok is always pdf > 0.
func Sample(p *Params, wo Vec, u [3]float64) (wi Vec, pdf float64, weight RGB, ok bool) {
	// The work is in sample, which takes the numbers and the weight by
	// pointer: this wrapper is small enough to be inlined, so the arrays
	// stay in the caller's frame instead of being copied through the stack
	// for the call (see eval).
	wi, pdf = sample(p, wo, &u, &weight)
	return wi, pdf, weight, pdf > 0
}

// sample is Sample; it stores the weight in *weight only for a
// successful sample (pdf > 0) and returns pdf 0 otherwise.
func sample(p *Params, wo Vec, u *[3]float64, weight *RGB) (wi Vec, pdf float64) {
	muO := wo.Z
	if !(muO > 0) {
		return Vec{}, 0
	}
	// (The hot path is written out in one function: calls cost more than
	// the arithmetic here, since every live value is spilled around them.)
	// Both lobes start from the same point (sqrt(u[1]), 2 pi u[2]) of the
	// unit disk in polar form.
	// sincos2pi(u[2]) written out (as a call it costs a fifth of Sample).
	xs := u[2] * sinCosN
	is := int(xs + 0.5)
	if float64(is) > xs+0.5 {
		is--
	}
	tab := &sinCosTable[is&(sinCosN-1)]
	rs := (xs - float64(is)) * (2 * math.Pi / sinCosN)
	zs := rs * rs
	srs := rs * (1 + zs*(-1.0/6+zs*(1.0/120)))
	crs := 1 + zs*(-1.0/2+zs*(1.0/24+zs*(-1.0/720)))
	sn, cs := tab[0]*crs+tab[1]*srs, tab[1]*crs-tab[0]*srs
	r := math.Sqrt(u[1])
	p1, p2 := r*cs, r*sn

	d0, d1, d2, s0, s1, s2 := p.coeffs()
	// SpecularProbability, written out, as the fraction a / b.
	w5 := pow5(1 - unit(muO))
	o0, o1, o2 := 1-s0, 1-s1, 1-s2
	a, b := lobeRatio(s0+s1+s2+(o0+o1+o2)*w5, (d0*o0*o0+d1*o1*o1+d2*o2*o2)*(1-w5))

	alpha := p.Alpha()
	a2 := alpha * alpha
	// so is both the length of wo stretched to the hemisphere
	// configuration, |(alpha wo.X, alpha wo.Y, wo.Z)|, and the term of the
	// Smith visibility below: for a unit wo they are the same number.
	so := math.Sqrt(float64(muO*muO*(1-a2)) + a2)
	if u[0]*b < a { // u[0] < a / b without the division
		// Visible normal (Heitz 2018, listing 1). Stretch the view into
		// the configuration of the hemisphere (alpha 1); its length is so.
		// Orthonormal basis (t1, t2, vh); t1 is perpendicular to the plane
		// of wo and the normal, which stretching does not change. One
		// division serves both normalisations.
		t1x, t1y, inv := 1.0, 0.0, 0.0 // inv = 1 / so
		if sxy := wo.X*wo.X + wo.Y*wo.Y; sxy > 0 {
			sq := math.Sqrt(sxy)
			i2 := 1 / (sq * so)
			k := so * i2 // 1 / sq
			t1x, t1y = -wo.Y*k, wo.X*k
			inv = sq * i2
		} else {
			inv = 1 / so
		}
		vx, vy, vz := alpha*wo.X*inv, alpha*wo.Y*inv, muO*inv
		t2x, t2y, t2z := -vz*t1y, vz*t1x, vx*t1y-vy*t1x // vh x t1
		// A uniform point on the unit disk, warped onto the visible half
		// of the hemisphere.
		h := 0.5 * (1 + vz)
		// 1 - p1^2 from u[1] rather than from r, so its square root
		// need not wait for r's.
		e := 1 - u[1]*(cs*cs)
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
			return Vec{}, 0
		}
		k := 2 * (wo.X*mx + wo.Y*my + wo.Z*mz) / m2
		wi = Vec{k*mx - wo.X, k*my - wo.Y, k*mz - wo.Z}
	} else {
		// Cosine-weighted hemisphere (Malley's method): a uniform point
		// on the unit disk lifted to the hemisphere.
		z := 1 - u[1]
		if z < 0 {
			z = 0
		}
		wi = Vec{p1, p2, math.Sqrt(z)}
	}
	muI := wi.Z
	if !(muI > 0) {
		return wi, 0
	}
	// The geometry of the pair as in geometry.prepare, with so known and
	// 1 - (1-muO)^5 = 1 - w5.
	hx, hy, hz := wo.X+wi.X, wo.Y+wi.Y, muO+muI
	hxy := float64(hx*hx) + float64(hy*hy)
	hz2 := hz * hz
	l2 := hxy + hz2
	q := hxy + a2*hz2
	voh := 0.5 * math.Sqrt(l2)
	if voh > 1 {
		voh = 1
	}
	si := math.Sqrt(float64(muI*muI*(1-a2)) + a2)
	den := float64(muI*so) + float64(muO*si)
	x := a2 * l2 * l2
	pd := 2 * math.Pi * q * q * den
	w := pow5(1 - voh)
	kd := (1 - w5) * (1 - pow5(1-unit(muI))) * (1 / math.Pi)

	// With D V = x / pd (geometry), S = muO + so and ps = a / b,
	//   pdf      = ps x / (2 pi q^2 S) + (1 - ps) muI / pi = n / (b t),
	//   t        = pi S pd,
	//   n        = pi a x den + (b - a) muI S pd,
	//   f_c      = (diff_c pd + spec_c x) / pd,
	//   weight_c = f_c muI / pdf = (diff_c pd + spec_c x) muI pi S b / n,
	// so one division, rr = 1 / (n b t), gives both pdf = n^2 rr and
	// 1 / n = b t rr: one division instead of four.
	sS := muO + so
	t2 := math.Pi * sS * pd
	n := math.Pi*a*x*den + (b-a)*muI*sS*pd
	rr := 1 / (n * (b * t2)) // b t2 is ready before n
	pdf = n * n * rr
	if !(pdf > 0) || math.IsInf(rr, 0) {
		return wi, 0
	}
	kk := muI * math.Pi * sS * b * b * t2 * rr
	kd *= pd
	e0, e1, e2 := 1-s0, 1-s1, 1-s2
	weight[0] = (d0*e0*e0*kd + (s0+e0*w)*x) * kk
	weight[1] = (d1*e1*e1*kd + (s1+e1*w)*x) * kk
	weight[2] = (d2*e2*e2*kd + (s2+e2*w)*x) * kk
	return wi, pdf
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
	// specularRatio written out (a call would spill every live value).
	w5 := pow5(1 - unit(muO))
	o0, o1, o2 := 1-s0, 1-s1, 1-s2
	a, b := lobeRatio(s0+s1+s2+(o0+o1+o2)*w5, (d0*o0*o0+d1*o1*o1+d2*o2*o2)*(1-w5))
	a2 := p.alpha2()
	// D as in geometry.set: alpha^2 |H|^4 / (pi q^2), H = wo + wi; the
	// specular density is X / Y with X = alpha^2 |H|^4 and
	// Y = 2 pi q^2 (muO + so), and ps = a / b, so
	// ps X / Y + (1 - ps) muI / pi = (a X + (b - a) (muI / pi) Y) / (b Y):
	// one division.
	hx, hy, hz := wo.X+wi.X, wo.Y+wi.Y, muO+muI
	hxy := float64(hx*hx) + float64(hy*hy)
	l2 := hxy + hz*hz
	q := hxy + a2*(hz*hz)
	so := math.Sqrt(float64(muO*muO*(1-a2)) + a2)
	y := 2 * math.Pi * q * q * (muO + so)
	return (a*a2*l2*l2 + (b-a)*muI*(1/math.Pi)*y) / (b * y)
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
	a, b := specularRatio(d0, d1, d2, s0, s1, s2, wo.Z)
	return a / b
}

// specularRatio returns SpecularProbability as a fraction a / b (b > 0),
// so the hot paths can fold the division into their own.
func specularRatio(d0, d1, d2, s0, s1, s2, muO float64) (a, b float64) {
	w := pow5(1 - unit(muO))
	o0, o1, o2 := 1-s0, 1-s1, 1-s2
	return lobeRatio(s0+s1+s2+(o0+o1+o2)*w, (d0*o0*o0+d1*o1*o1+d2*o2*o2)*(1-w))
}

// lobeRatio returns the specular probability for the specular and diffuse
// albedo estimates ws and wd as a fraction a / b: ws / (ws + wd) kept
// within [0.05, 0.95], 1 when there is no diffuse part.
func lobeRatio(ws, wd float64) (a, b float64) {
	if !(wd > 0) {
		return 1, 1
	}
	if !(ws > 0) {
		return 0.05, 1
	}
	tot := ws + wd
	if !(ws > 0.05*tot) {
		return 0.05, 1
	}
	if ws > 0.95*tot {
		return 0.95, 1
	}
	return ws, tot
}
