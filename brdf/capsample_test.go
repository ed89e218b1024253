package brdf

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// A candidate for Sample's specular lobe: visible normals by the
// spherical-cap construction of
//
//	J. Dupuy, A. Benyoub, Sampling Visible GGX Normals with Spherical
//	Caps, Computer Graphics Forum 42(8) (HPG 2023),
//
// which has exactly the distribution of the sampler of
//
//	E. Heitz, Sampling the GGX Distribution of Visible Normals, JCGT 7(4),
//	2018,
//
// that Sample uses, with two square roots fewer and no orthonormal basis.
// It is not Sample's sampler yet because it maps the same numbers u to
// other directions: renders with a fixed seed get another realisation, and
// two of the renderer's fixed-seed tests (render TestStrategiesAgree,
// TestIndirectClamp) depend on the one they have (their glossy scene's
// BRDF-only estimate is heavy-tailed at 64 samples per pixel). The tests
// below show it draws Sample's distribution; the benchmark measures it.

// capSample is Sample with the spherical-cap visible normals.
func capSample(p *Params, wo Vec, u [3]float64) (wi Vec, pdf float64, weight RGB, ok bool) {
	wi, pdf = capSampleCore(p, wo, &u, &weight)
	return wi, pdf, weight, pdf > 0
}

// capSampleCore is sample with the spherical-cap branch.
func capSampleCore(p *Params, wo Vec, u *[3]float64, weight *RGB) (wi Vec, pdf float64) {
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
	is := int(xs)
	tab := &sinCosTable[is&(sinCosN-1)]
	rs := (xs - float64(is)) * (2 * math.Pi / sinCosN)
	zs := rs * rs
	srs := rs * (1 + zs*(-1.0/6+zs*(1.0/120+zs*(-1.0/5040))))
	crs := 1 + zs*(-1.0/2+zs*(1.0/24+zs*(-1.0/720+zs*(1.0/40320))))
	sn, cs := tab[0]*crs+tab[1]*srs, tab[1]*crs-tab[0]*srs

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
	if u[0]*b < a {
		// Visible normal by spherical caps (Dupuy and Benyoub 2023,
		// listing 3): in the hemisphere configuration (alpha 1) the
		// visible normals are v + c, with v the stretched unit view and c
		// uniform on the part z > -v.z of the unit sphere.
		inv := 1 / so
		vx, vy, vz := alpha*wo.X*inv, alpha*wo.Y*inv, muO*inv
		// z = (1 - u1)(1 + vz) - vz is uniform on (-vz, 1]; its sine
		// from (1 - z)(1 + z), free of cancellation near the poles.
		t := (1 - u[1]) * (1 + vz)
		st := math.Sqrt(u[1] * (1 + vz) * (t + (1 - vz)))
		// h = v + c (whose z is t), unstretched to the normal m (not
		// normalised); then reflect: wi = 2 (wo.m) m / |m|^2 - wo.
		mx, my, mz := alpha*(st*cs+vx), alpha*(st*sn+vy), t
		m2 := mx*mx + my*my + mz*mz
		if !(m2 > 0) {
			return Vec{}, 0
		}
		k := 2 * (wo.X*mx + wo.Y*my + wo.Z*mz) / m2
		wi = Vec{k*mx - wo.X, k*my - wo.Y, k*mz - wo.Z}
	} else {
		// Cosine-weighted hemisphere (Malley's method): a uniform point
		// on the unit disk lifted to the hemisphere.
		r := math.Sqrt(u[1])
		z := 1 - u[1]
		if z < 0 {
			z = 0
		}
		wi = Vec{r * cs, r * sn, math.Sqrt(z)}
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

// twoSampleChiSquare bins the directions drawn by f and g from the same
// numbers' distribution (n each, independent streams) on the equal-area
// grid of chiSquare, failed samples as one more bin, and returns the
// p-value of the chi-square test that both follow one distribution:
// X^2 = sum (A_i - B_i)^2 / (A_i + B_i) over bins with A_i + B_i >= 10
// (the rest pooled), with bins - 1 degrees of freedom for equal sample
// sizes (Numerical Recipes, 3rd ed., section 14.3, the chi-square test of
// two binned data sets; from memory). gonum stat/distuv gives the tail.
func twoSampleChiSquare(f, g func(u [3]float64) (Vec, bool), n int, seed uint64) (stat float64, dof int, pvalue float64) {
	const binsMu, binsPhi = 16, 32
	bin := func(wi Vec, ok bool) int {
		if !ok {
			return binsMu * binsPhi
		}
		bi := min(int(wi.Z*binsMu), binsMu-1)
		phi := math.Atan2(wi.Y, wi.X)
		if phi < 0 {
			phi += 2 * math.Pi
		}
		return bi*binsPhi + min(int(phi/(2*math.Pi)*binsPhi), binsPhi-1)
	}
	a := make([]float64, binsMu*binsPhi+1)
	b := make([]float64, len(a))
	ra := rand.New(rand.NewPCG(seed, 1))
	rb := rand.New(rand.NewPCG(seed, 2))
	for i := 0; i < n; i++ {
		a[bin(f([3]float64{ra.Float64(), ra.Float64(), ra.Float64()}))]++
		b[bin(g([3]float64{rb.Float64(), rb.Float64(), rb.Float64()}))]++
	}
	var pa, pb float64
	cells := 0
	for i := range a {
		if a[i]+b[i] < 10 {
			pa += a[i]
			pb += b[i]
			continue
		}
		d := a[i] - b[i]
		stat += d * d / (a[i] + b[i])
		cells++
	}
	if pa+pb >= 10 {
		d := pa - pb
		stat += d * d / (pa + pb)
		cells++
	}
	dof = cells - 1
	return stat, dof, distuv.ChiSquared{K: float64(dof)}.Survival(stat)
}

// The spherical-cap sampler draws the same directions' distribution as
// Sample's Heitz 2018 sampler (Dupuy and Benyoub 2023 prove the two
// equal), for every sampling case, by a two-sample chi-square test; and
// it follows PDF by the one-sample test of TestSampleChiSquare.
func TestSphericalCapsMatchHeitz2018(t *testing.T) {
	const n = 200000
	cases := append([]sampleCase{
		{"metal smooth grazing", Params{Kind: Metal, Specular: RGB{0.9, 0.9, 0.9}, Roughness: 0.2}, 85},
		{"metal mirror-like", Params{Kind: Metal, Specular: RGB{0.9, 0.9, 0.9}, Roughness: 0.05}, 40},
	}, sampleCases...)
	for i, sc := range cases {
		wo := viewDir(sc.theta)
		heitz := func(u [3]float64) (Vec, bool) { wi, _, _, ok := Sample(&sc.p, wo, u); return wi, ok }
		caps := func(u [3]float64) (Vec, bool) { wi, _, _, ok := capSample(&sc.p, wo, u); return wi, ok }
		stat, dof, pv := twoSampleChiSquare(caps, heitz, n, uint64(31+i))
		t.Logf("%s: caps vs Heitz 2018: chi2 %.1f, dof %d, p-value %.3f", sc.name, stat, dof, pv)
		if pv < 1e-3 {
			t.Errorf("%s: spherical caps and Heitz 2018 differ: chi2 %.1f with %d dof, p-value %.2g", sc.name, stat, dof, pv)
		}
		// Every cap sample's pdf and weight are PDF and Eval cos / pdf.
		rng := rand.New(rand.NewPCG(uint64(i), 77))
		for j := 0; j < 2000; j++ {
			u := [3]float64{rng.Float64(), rng.Float64(), rng.Float64()}
			wi, pdf, w, ok := capSample(&sc.p, wo, u)
			if !ok {
				continue
			}
			if want := PDF(&sc.p, wo, wi); relErr(pdf, want) > 1e-12 {
				t.Fatalf("%s: cap sample pdf %g, PDF %g", sc.name, pdf, want)
			}
			f := Eval(&sc.p, wo, wi)
			for c := 0; c < 3; c++ {
				if want := f[c] * wi.Z / pdf; relErr(w[c], want) > 1e-12 {
					t.Fatalf("%s: cap weight %g, Eval cos / pdf %g", sc.name, w[c], want)
				}
			}
		}
		// Against PDF directly, with the lost mass as one bin, where the
		// quadrature of chiSquare resolves the lobe (the two sharp cases
		// in front are beyond its 8 nodes per bin, for either sampler).
		if i < 2 {
			continue
		}
		saved := sampleFunc
		sampleFunc = capSample
		lost := SpecularProbability(&sc.p, wo) * lostProbability(sc.p.Alpha(), sc.theta)
		_, _, pv1 := chiSquare(&sc.p, wo, func(w Vec) float64 { return PDF(&sc.p, wo, w) }, lost, n, uint64(51+i))
		sampleFunc = saved
		if pv1 < 1e-3 {
			t.Errorf("%s: spherical caps do not follow PDF: p-value %.2g", sc.name, pv1)
		}
	}
}

// The two-sample test can fail: the caps at 5% more roughness are told
// apart from Heitz 2018 at the original one.
func TestTwoSampleChiSquareDetectsMismatch(t *testing.T) {
	sc := sampleCases[2]
	wo := viewDir(sc.theta)
	other := sc.p
	other.Roughness *= 1.05
	heitz := func(u [3]float64) (Vec, bool) { wi, _, _, ok := Sample(&sc.p, wo, u); return wi, ok }
	caps := func(u [3]float64) (Vec, bool) { wi, _, _, ok := capSample(&other, wo, u); return wi, ok }
	if _, _, pv := twoSampleChiSquare(caps, heitz, 200000, 97); pv > 1e-6 {
		t.Errorf("a 5%% roughness mismatch went unnoticed: p-value %.3g", pv)
	}
}
