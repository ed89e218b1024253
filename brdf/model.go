package brdf

import "math"

// Grad holds the derivatives of the three channels of the BRDF value with
// respect to the entries of the parameter vector: Grad[c][j] is
// d f_c / d v_j, with v in the order Params.Vector documents. Entries
// beyond Kind.NumParams are zero.
type Grad [3][MaxParams]float64

// Eval returns the BRDF value f(wo, wi) per channel, in 1/sr, for the view
// direction wo (towards the viewer) and the light direction wi (towards the
// light), both unit vectors in the local frame. The cosine factor wi.Z is
// NOT included. It is zero when either direction is at or below the
// horizon. Eval(p, wo, wi) == Eval(p, wi, wo) exactly: the arithmetic is
// arranged symmetrically.
func Eval(p *Params, wo, wi Vec) RGB {
	r, g, b := eval(p, wo, wi)
	return RGB{r, g, b}
}

// eval is Eval with the channels as three results. Go passes arrays
// through memory but small structs and scalars in registers; with the
// RGB built in the small inlined wrapper above, a caller that reads the
// channels one by one (the fit, the renderer) gets them without the
// 24-byte copies through the stack, whose overlapping 16-byte moves stall
// store forwarding and cost about as much as the model's arithmetic.
func eval(p *Params, wo, wi Vec) (r, g, b float64) {
	muO, muI := wo.Z, wi.Z
	if !(muO > 0 && muI > 0) {
		return
	}
	// geometry.set written out with scalars (the same expressions, see
	// there): a call, or the struct in memory, costs more than this.
	a2 := p.alpha2()
	hx, hy, hz := wo.X+wi.X, wo.Y+wi.Y, muO+muI
	hxy := float64(hx*hx) + float64(hy*hy)
	hz2 := hz * hz
	l2 := hxy + hz2
	q := hxy + a2*hz2
	voh := 0.5 * math.Sqrt(l2)
	if voh > 1 {
		voh = 1
	}
	so := math.Sqrt(float64(muO*muO*(1-a2)) + a2)
	si := math.Sqrt(float64(muI*muI*(1-a2)) + a2)
	den := float64(muI*so) + float64(muO*si)
	dv := (a2 * l2 * l2) / (2 * math.Pi * q * q * den)
	w := pow5(1 - voh)
	kd := float64((1-pow5(1-unit(muO)))*(1-pow5(1-unit(muI)))) * (1 / math.Pi)
	d0, d1, d2, s0, s1, s2 := p.coeffs()
	return channel(d0, s0, dv, w, kd), channel(d1, s1, dv, w, kd), channel(d2, s2, dv, w, kd)
}

// channel returns the model's value for one channel of diffuse albedo d
// and F0 f0, given the pair's D V, Schlick weight w and diffuse weight kd.
func channel(d, f0, dv, w, kd float64) float64 {
	one := 1 - f0
	return d*one*one*kd + (f0+one*w)*dv
}

// EvalLobes returns the diffuse and specular parts of Eval separately
// (their sum is Eval's value up to rounding).
func EvalLobes(p *Params, wo, wi Vec) (diffuse, specular RGB) {
	if !(wo.Z > 0 && wi.Z > 0) {
		return
	}
	d, f0 := p.effective()
	var gm geometry
	gm.set(p.alpha2(), wo, wi)
	for c := 0; c < 3; c++ {
		one := 1 - f0[c]
		diffuse[c] = d[c] * one * one * gm.kd
		specular[c] = (f0[c] + one*gm.w) * gm.dv
	}
	return
}

// channel returns the model's value for one channel (see channel).
func (g *geometry) channel(d, f0 float64) float64 { return channel(d, f0, g.dv, g.w, g.kd) }

// geometry holds the parameter-independent factors of the model for one
// pair of directions (for EvalLobes; the hot paths keep them in scalars).
type geometry struct {
	hz2 float64 // (muO + muI)^2, the squared z of the unnormalised half vector
	l2  float64 // |wo + wi|^2
	q   float64 // hx^2 + hy^2 + alpha^2 hz^2: D's denominator times |wo+wi|^2
	so  float64 // sqrt(muO^2 (1 - alpha^2) + alpha^2)
	si  float64 // the same for muI
	den float64 // muI so + muO si
	x   float64 // alpha^2 |H|^4
	p   float64 // 2 pi q^2
	dv  float64 // D V = x / (p den), with V = G2 / (4 muO muI) = 0.5 / den
	w   float64 // Schlick weight (1 - wo.h)^5
	kd  float64 // diffuse weight (1 - (1-muO)^5) (1 - (1-muI)^5) / pi
}

// set fills g for unit directions wo, wi above the horizon and a2 = alpha^2.
//
// With H = wo + wi unnormalised, (n.h)^2 = Hz^2 / |H|^2, so GGX's
// denominator (n.h)^2 (alpha^2 - 1) + 1 is q / |H|^2 with
// q = Hx^2 + Hy^2 + alpha^2 Hz^2 (free of cancellation), and
// D = alpha^2 |H|^4 / (pi q^2): no square root or division for n.h.
//
// Every expression is symmetric in wo and wi, and the products that are
// summed are rounded explicitly (float64 conversions forbid fused
// multiply-adds), so swapping the directions gives bit-identical results.
func (g *geometry) set(a2 float64, wo, wi Vec) {
	g.prepare(a2, wo, wi)
	g.dv = g.x / (g.p * g.den)
}

// prepare fills every field of g but dv. (eval, evalGrad and sample
// write these expressions out with scalars; EvalLobes uses them as they
// are.)
func (g *geometry) prepare(a2 float64, wo, wi Vec) {
	muO, muI := wo.Z, wi.Z
	hx, hy, hz := wo.X+wi.X, wo.Y+wi.Y, muO+muI
	hxy := float64(hx*hx) + float64(hy*hy)
	g.hz2 = hz * hz
	l2 := hxy + g.hz2
	g.l2 = l2
	g.q = hxy + a2*g.hz2
	// For unit vectors wo.h = wi.h = |wo + wi| / 2: one symmetric value.
	voh := 0.5 * math.Sqrt(l2)
	if voh > 1 {
		voh = 1
	}
	g.so = math.Sqrt(float64(muO*muO*(1-a2)) + a2)
	g.si = math.Sqrt(float64(muI*muI*(1-a2)) + a2)
	// Height-correlated Smith G2 / (4 muO muI) written as one fraction
	// (Heitz 2014, eq. 99 with Lambda from eq. 72): V = 0.5 / den, so
	// D V = x / (p den) with x = alpha^2 |H|^4 and p = 2 pi q^2.
	g.den = float64(muI*g.so) + float64(muO*g.si)
	g.x = a2 * l2 * l2
	g.p = 2 * math.Pi * g.q * g.q
	g.w = pow5(1 - voh)
	g.kd = float64((1-pow5(1-unit(muO)))*(1-pow5(1-unit(muI)))) * (1 / math.Pi)
}

// unit clamps a cosine to at most 1 (directions are unit vectors up to
// rounding; callers have checked the lower bound).
func unit(x float64) float64 {
	if x > 1 {
		return 1
	}
	return x
}

// EvalGrad returns the same value as Eval and stores in g the analytic
// derivative of each channel with respect to each entry of p's parameter
// vector (order of Params.Vector). Below the horizon both are zero. The
// roughness derivative is zero where Roughness < MinRoughness (the clamp).
func EvalGrad(p *Params, wo, wi Vec, g *Grad) RGB {
	r, gg, b := evalGrad(p, wo, wi, g)
	return RGB{r, gg, b}
}

// evalGrad is EvalGrad with the channels as three results (see eval).
func evalGrad(p *Params, wo, wi Vec, g *Grad) (r, gg, b float64) {
	*g = Grad{}
	muO, muI := wo.Z, wi.Z
	if !(muO > 0 && muI > 0) {
		return
	}
	alpha := p.Alpha()
	a2 := alpha * alpha
	// The geometry as in eval.
	hx, hy, hz := wo.X+wi.X, wo.Y+wi.Y, muO+muI
	hxy := float64(hx*hx) + float64(hy*hy)
	hz2 := hz * hz
	l2 := hxy + hz2
	q := hxy + a2*hz2
	voh := 0.5 * math.Sqrt(l2)
	if voh > 1 {
		voh = 1
	}
	so := math.Sqrt(float64(muO*muO*(1-a2)) + a2)
	si := math.Sqrt(float64(muI*muI*(1-a2)) + a2)
	den := float64(muI*so) + float64(muO*si)
	dv := (a2 * l2 * l2) / (2 * math.Pi * q * q * den)
	w := pow5(1 - voh)
	kd := float64((1-pow5(1-unit(muO)))*(1-pow5(1-unit(muI)))) * (1 / math.Pi)

	// d(D V)/d alpha = D V (dlnD/dalpha + dlnV/dalpha), with
	// dlnD/dalpha = 2/alpha - 4 alpha (n.h)^2 / ((n.h)^2 (alpha^2-1) + 1)
	//             = 2/alpha - 4 alpha Hz^2 / q and
	// dlnV/dalpha = -(muI dso + muO dsi) / den, dso = alpha (1 - muO^2) / so.
	dso := alpha * (1 - muO*muO) / so
	dsi := alpha * (1 - muI*muI) / si
	dlog := 2/alpha - 4*alpha*hz2/q - (muI*dso+muO*dsi)/den
	dDVdr := 0.0
	if p.Roughness > MinRoughness {
		dDVdr = dv * dlog * 2 * p.Roughness // dalpha/dr = 2r
	}

	d0, d1, d2, s0, s1, s2 := p.coeffs()
	f0, dd0, ds0, dr0 := channelGrad(d0, s0, dv, w, kd, dDVdr)
	f1, dd1, ds1, dr1 := channelGrad(d1, s1, dv, w, kd, dDVdr)
	f2, dd2, ds2, dr2 := channelGrad(d2, s2, dv, w, kd, dDVdr)
	switch p.Kind {
	case Dielectric:
		g[0][0], g[0][3], g[0][4] = dd0, ds0, dr0
		g[1][1], g[1][3], g[1][4] = dd1, ds1, dr1
		g[2][2], g[2][3], g[2][4] = dd2, ds2, dr2
	case Metal:
		// d is zero, so the F0 derivative is the specular part alone.
		g[0][0], g[0][3] = ds0, dr0
		g[1][1], g[1][3] = ds1, dr1
		g[2][2], g[2][3] = ds2, dr2
	case Free:
		g[0][0], g[0][3], g[0][6] = dd0, ds0, dr0
		g[1][1], g[1][4], g[1][6] = dd1, ds1, dr1
		g[2][2], g[2][5], g[2][6] = dd2, ds2, dr2
	}
	return f0, f1, f2
}

// channelGrad returns channel(d, f0, dv, w, kd) and its derivatives with
// respect to d, f0 and the roughness r, given dDVdr = d(D V)/dr.
func channelGrad(d, f0, dv, w, kd, dDVdr float64) (f, dd, ds, dr float64) {
	one := 1 - f0
	f = d*one*one*kd + (f0+one*w)*dv
	dd = one * one * kd
	ds = (1-w)*dv - 2*d*one*kd
	dr = (f0 + one*w) * dDVdr
	return
}
