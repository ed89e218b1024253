package brdf

import (
	"math"
	"sort"
	"sync"

	"gonum.org/v1/gonum/integrate/quad"
)

// Numerical integration for the checks: Gauss-Legendre nodes from gonum's
// integrate/quad, applied over sub-intervals so that peaked lobes and the
// kinks of max(0, .) and of the horizon fall on interval ends.

type glRule struct{ x, w []float64 }

var (
	glMu    sync.Mutex
	glCache = map[int]glRule{}
)

// legendre returns the n Gauss-Legendre nodes and weights on [-1, 1].
func legendre(n int) glRule {
	glMu.Lock()
	defer glMu.Unlock()
	if r, ok := glCache[n]; ok {
		return r
	}
	r := glRule{make([]float64, n), make([]float64, n)}
	quad.Legendre{}.FixedLocations(r.x, r.w, -1, 1)
	glCache[n] = r
	return r
}

// integrate returns the integral of f over [a, b] with an n-point
// Gauss-Legendre rule.
func integrate(f func(float64) float64, a, b float64, n int) float64 {
	if b <= a {
		return 0
	}
	r := legendre(n)
	h, m := 0.5*(b-a), 0.5*(a+b)
	s := 0.0
	for i, x := range r.x {
		s += r.w[i] * f(m+h*x)
	}
	return s * h
}

// integrateBreaks integrates f over the intervals between consecutive
// breakpoints (sorted, deduplicated by the caller), n nodes each.
func integrateBreaks(f func(float64) float64, breaks []float64, n int) float64 {
	s := 0.0
	for i := 1; i < len(breaks); i++ {
		s += integrate(f, breaks[i-1], breaks[i], n)
	}
	return s
}

// thetaBreaks returns breakpoints on [0, pi/2] that resolve a lobe of
// angular width about alpha around theta = 0.
func thetaBreaks(alpha float64) []float64 {
	b := []float64{0}
	for _, k := range []float64{0.5, 1, 2, 4, 8, 16, 32, 64} {
		t := k * alpha
		if t >= math.Pi/2 {
			break
		}
		b = append(b, t)
	}
	return append(b, math.Pi/2)
}

// albedoH returns the directional albedo of f for the view wo = (sin tO,
// 0, cos tO): the integral of f(wo, wi) wi.Z over the hemisphere, computed
// over half vectors (wi = reflect(wo, h), d omega_i = 4 (wo.h) d omega_h),
// where the specular peak sits at h = n and the horizon is a known azimuth.
func albedoH(f func(wo, wi Vec) float64, thetaO, alpha float64, n int) float64 {
	so, co := math.Sincos(thetaO)
	wo := Vec{so, 0, co}
	inner := func(th float64) float64 {
		sh, ch := math.Sincos(th)
		// wi.Z > 0 and wo.h > 0 are conditions on cos(phi) > kappa.
		kappa := -1.0
		if so*sh > 0 {
			k1 := co * (1 - 2*ch*ch) / (2 * so * sh * ch)
			k2 := -co * ch / (so * sh)
			kappa = math.Max(k1, k2)
		} else if 2*ch*ch-1 <= 0 { // normal view: wi.Z = 2 ch^2 - 1
			return 0
		}
		if kappa >= 1 {
			return 0
		}
		phiMax := math.Pi
		if kappa > -1 {
			phiMax = math.Acos(kappa)
		}
		g := func(phi float64) float64 {
			sp, cp := math.Sincos(phi)
			h := Vec{sh * cp, sh * sp, ch}
			d := wo.Dot(h)
			wi := h.Scale(2 * d).Sub(wo)
			if wi.Z <= 0 || d <= 0 {
				return 0
			}
			return f(wo, wi) * wi.Z * 4 * d * sh
		}
		return 2 * integrate(g, 0, phiMax, n) // symmetric in phi
	}
	// The azimuth limits change form where kappa crosses -1 or 1: at
	// theta_h = (pi/2 - theta_o)/2, (pi/2 + theta_o)/2 and pi/2 - theta_o.
	br := thetaBreaks(alpha)
	for _, k := range []float64{(math.Pi/2 - thetaO) / 2, (math.Pi/2 + thetaO) / 2, math.Pi/2 - thetaO} {
		if k > 0 && k < math.Pi/2 {
			br = insertSorted(br, k)
		}
	}
	return integrateBreaks(inner, br, n)
}

// sphereIntegral integrates g over the upper hemisphere in (cos theta, phi)
// with nt x np nodes on a grid of bins, so bins that see a peaked lobe get
// their own nodes.
func sphereIntegral(g func(w Vec) float64, binsMu, binsPhi, n int) float64 {
	s := 0.0
	for i := 0; i < binsMu; i++ {
		for j := 0; j < binsPhi; j++ {
			s += binIntegral(g, i, j, binsMu, binsPhi, n)
		}
	}
	return s
}

// binIntegral integrates g over bin (i, j) of the equal-area grid: cos
// theta in [i/binsMu, (i+1)/binsMu], phi in 2 pi [j/binsPhi, (j+1)/binsPhi].
func binIntegral(g func(w Vec) float64, i, j, binsMu, binsPhi, n int) float64 {
	mu0, mu1 := float64(i)/float64(binsMu), float64(i+1)/float64(binsMu)
	p0, p1 := 2*math.Pi*float64(j)/float64(binsPhi), 2*math.Pi*float64(j+1)/float64(binsPhi)
	return integrate(func(mu float64) float64 {
		st := math.Sqrt(math.Max(0, 1-mu*mu))
		return integrate(func(phi float64) float64 {
			sp, cp := math.Sincos(phi)
			return g(Vec{st * cp, st * sp, mu})
		}, p0, p1, n)
	}, mu0, mu1, n)
}

// relErr returns |a-b| / max(|a|, |b|), 0 when both are 0.
func relErr(a, b float64) float64 {
	m := math.Max(math.Abs(a), math.Abs(b))
	if m == 0 {
		return 0
	}
	return math.Abs(a-b) / m
}

// insertSorted inserts x into the sorted slice b.
func insertSorted(b []float64, x float64) []float64 {
	i := sort.SearchFloat64s(b, x)
	if i < len(b) && b[i] == x {
		return b
	}
	b = append(b, 0)
	copy(b[i+1:], b[i:])
	b[i] = x
	return b
}
