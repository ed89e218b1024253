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
	muO, muI := wo.Z, wi.Z
	if !(muO > 0 && muI > 0) {
		return RGB{}
	}
	d, f0 := p.effective()
	a2 := p.Alpha()
	a2 *= a2
	var gm geometry
	gm.set(a2, wo, wi)
	var f RGB
	for c := 0; c < 3; c++ {
		one := 1 - f0[c]
		f[c] = d[c]*one*one*gm.kd + (f0[c]+one*gm.w)*gm.dv
	}
	return f
}

// EvalLobes returns the diffuse and specular parts of Eval separately
// (their sum is Eval's value up to rounding).
func EvalLobes(p *Params, wo, wi Vec) (diffuse, specular RGB) {
	muO, muI := wo.Z, wi.Z
	if !(muO > 0 && muI > 0) {
		return
	}
	d, f0 := p.effective()
	a2 := p.Alpha()
	a2 *= a2
	var gm geometry
	gm.set(a2, wo, wi)
	for c := 0; c < 3; c++ {
		one := 1 - f0[c]
		diffuse[c] = d[c] * one * one * gm.kd
		specular[c] = (f0[c] + one*gm.w) * gm.dv
	}
	return
}

// geometry holds the parameter-independent factors of the model for one
// pair of directions.
type geometry struct {
	muH float64 // n.h
	t   float64 // (n.h)^2 (alpha^2 - 1) + 1, the denominator of D
	so  float64 // sqrt(muO^2 (1 - alpha^2) + alpha^2)
	si  float64 // the same for muI
	den float64 // muI so + muO si
	dv  float64 // D V, with V = G2 / (4 muO muI) = 0.5 / den
	w   float64 // Schlick weight (1 - wo.h)^5
	kd  float64 // diffuse weight (1 - (1-muO)^5) (1 - (1-muI)^5) / pi
}

// set fills g for unit directions wo, wi above the horizon and a2 = alpha^2.
// Every expression is symmetric in wo and wi, and the products that are
// summed are rounded explicitly (float64 conversions forbid fused
// multiply-adds), so swapping the directions gives bit-identical results.
func (g *geometry) set(a2 float64, wo, wi Vec) {
	muO, muI := wo.Z, wi.Z
	l := wo.Add(wi).Len()
	g.muH = (muO + muI) / l
	// For unit vectors wo.h = wi.h = |wo + wi| / 2: one symmetric value.
	voh := clamp01(0.5 * l)
	g.t = g.muH*g.muH*(a2-1) + 1
	dist := a2 / (math.Pi * g.t * g.t)
	g.so = math.Sqrt(float64(muO*muO*(1-a2)) + a2)
	g.si = math.Sqrt(float64(muI*muI*(1-a2)) + a2)
	// Height-correlated Smith G2 / (4 muO muI) written as one fraction
	// (Heitz 2014, eq. 99 with Lambda from eq. 72).
	g.den = float64(muI*g.so) + float64(muO*g.si)
	g.dv = dist * (0.5 / g.den)
	g.w = pow5(1 - voh)
	g.kd = float64((1-pow5(1-clamp01(muO)))*(1-pow5(1-clamp01(muI)))) * (1 / math.Pi)
}

// EvalGrad returns the same value as Eval and stores in g the analytic
// derivative of each channel with respect to each entry of p's parameter
// vector (order of Params.Vector). Below the horizon both are zero. The
// roughness derivative is zero where Roughness < MinRoughness (the clamp).
func EvalGrad(p *Params, wo, wi Vec, g *Grad) RGB {
	*g = Grad{}
	muO, muI := wo.Z, wi.Z
	if !(muO > 0 && muI > 0) {
		return RGB{}
	}
	d, f0 := p.effective()
	alpha := p.Alpha()
	a2 := alpha * alpha
	var gm geometry
	gm.set(a2, wo, wi)

	// d(D V)/d alpha = D V (dlnD/dalpha + dlnV/dalpha), with
	// dlnD/dalpha = 2/alpha - 4 alpha muH^2 / t and
	// dlnV/dalpha = -(muI dso + muO dsi) / den, dso = alpha (1 - muO^2) / so.
	dso := alpha * (1 - muO*muO) / gm.so
	dsi := alpha * (1 - muI*muI) / gm.si
	dlog := 2/alpha - 4*alpha*gm.muH*gm.muH/gm.t - (muI*dso+muO*dsi)/gm.den
	dDVdr := 0.0
	if p.Roughness > MinRoughness {
		dDVdr = gm.dv * dlog * 2 * p.Roughness // dalpha/dr = 2r
	}

	var f RGB
	var dfdd, dfds, dfdr RGB // derivatives per channel w.r.t. own diffuse, own F0, r
	for c := 0; c < 3; c++ {
		one := 1 - f0[c]
		spec := f0[c] + one*gm.w
		f[c] = d[c]*one*one*gm.kd + spec*gm.dv
		dfdd[c] = one * one * gm.kd
		dfds[c] = (1-gm.w)*gm.dv - 2*d[c]*one*gm.kd
		dfdr[c] = spec * dDVdr
	}
	switch p.Kind {
	case Dielectric:
		for c := 0; c < 3; c++ {
			g[c][c] = dfdd[c]
			g[c][3] = dfds[c]
			g[c][4] = dfdr[c]
		}
	case Metal:
		for c := 0; c < 3; c++ {
			g[c][c] = dfds[c] // d is zero, so only the specular part
			g[c][3] = dfdr[c]
		}
	case Free:
		for c := 0; c < 3; c++ {
			g[c][c] = dfdd[c]
			g[c][3+c] = dfds[c]
			g[c][6] = dfdr[c]
		}
	}
	return f
}

// halfCos returns n.h for the half vector h of wo and wi, as geometry.set
// computes it.
func halfCos(wo, wi Vec) float64 { return (wo.Z + wi.Z) / wo.Add(wi).Len() }
