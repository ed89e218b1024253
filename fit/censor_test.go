package fit

import (
	"context"
	"encoding/json"
	"math"
	"math/rand/v2"
	"sort"
	"testing"

	"gonum.org/v1/gonum/diff/fd"

	"patina/brdf"
	"patina/render/refcheck"
)

// TestNormalTailAgainstScipy checks -log Phi(x) and the inverse Mills
// ratio phi(x)/Phi(x) of the censored likelihood against
// scipy.special.log_ndtr and scipy.stats.norm.logpdf (Debian
// python3-scipy), from the far lower tail (where the asymptotic series is
// used) to the upper one.
func TestNormalTailAgainstScipy(t *testing.T) {
	refcheck.RequirePython(t, map[string]string{"scipy": "python3-scipy"})
	xs := []float64{-60, -35, -30.5, -29.5, -12, -5, -2, -0.5, 0, 0.3, 1, 3, 8, 12, 30}
	arg, _ := json.Marshal(xs)
	out := refcheck.RunPython(t, `
import json, sys, math
from scipy.special import log_ndtr
from scipy.stats import norm
xs = json.loads(sys.argv[1])
print(json.dumps([[-float(log_ndtr(x)), float(math.exp(norm.logpdf(x) - log_ndtr(x)))] for x in xs]))
`, string(arg))
	var want [][2]float64
	if err := json.Unmarshal(out, &want); err != nil {
		t.Fatal(err)
	}
	for i, x := range xs {
		n, lambda := normalTail(x)
		// Relative 1e-9 on both (absolute 1e-300 for the underflowing tail).
		if d := math.Abs(n - want[i][0]); d > 1e-9*math.Abs(want[i][0])+1e-300 {
			t.Errorf("x = %g: -log Phi = %.15g, scipy %.15g", x, n, want[i][0])
		}
		if d := math.Abs(lambda - want[i][1]); d > 1e-9*math.Abs(want[i][1])+1e-300 {
			t.Errorf("x = %g: phi/Phi = %.15g, scipy %.15g", x, lambda, want[i][1])
		}
	}
}

// clipObservations marks every channel of obs at or above clip as censored
// at clip, as BuildObservations does for a saturated pixel, and returns the
// number of observations with a clipped channel.
func clipObservations(obs *Observations, clip float64) int {
	obs.Censored = make([]uint8, obs.Len())
	n := 0
	for i := range obs.Censored {
		for c, v := range []*float32{&obs.R[i], &obs.G[i], &obs.B[i]} {
			if float64(*v) >= clip {
				*v = float32(clip)
				obs.Censored[i] |= 1 << c
			}
		}
		if obs.Censored[i] != 0 {
			n++
		}
	}
	return n
}

// dropCensored returns the observations of obs without a clipped channel:
// what the fit kept when saturated pixels were rejected.
func dropCensored(obs *Observations) *Observations {
	out := &Observations{}
	for i := 0; i < obs.Len(); i++ {
		if obs.censored(i) != 0 {
			continue
		}
		s, e := obs.lights(i)
		for l := s; l < e; l++ {
			out.AddLight(brdf.Vec{X: float64(obs.WiX[l]), Y: float64(obs.WiY[l]), Z: float64(obs.WiZ[l])},
				[3]float64{float64(obs.ER[l]), float64(obs.EG[l]), float64(obs.EB[l])})
		}
		out.Add(brdf.Vec{X: float64(obs.WoX[i]), Y: float64(obs.WoY[i]), Z: float64(obs.WoZ[i])},
			[3]float64{float64(obs.R[i]), float64(obs.G[i]), float64(obs.B[i])}, int(obs.Photo[i]))
	}
	return out
}

// quantile returns the q-quantile of the largest channel of obs.
func quantile(obs *Observations, q float64) float64 {
	v := make([]float64, obs.Len())
	for i := range v {
		v[i] = math.Max(float64(obs.R[i]), math.Max(float64(obs.G[i]), float64(obs.B[i])))
	}
	sort.Float64s(v)
	return v[int(q*float64(len(v)-1))]
}

// TestObjectiveGradientCensored repeats the objective's gradient check
// (central finite differences, gonum diff/fd) with a tenth of the
// observations clipped, at a point where some clipped channels lie below
// the model and some above, for every model kind; and checks the
// Gauss-Newton matrix of the censored terms, which is the Hessian at
// residual 0 only for ordinary terms, against its own definition: for a
// single clipped channel the weight lambda^2 / (2 n) / sqrt(1 + (u/delta)^2)
// times J J^T, with J by finite differences.
func TestObjectiveGradientCensored(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, c := range recoveryGrid()[:5] {
		obs := sphereScene(20).render(c.kind, c.diffuse, c.f0, c.rough, 0.05, rng)
		if clipObservations(obs, quantile(obs, 0.9)) == 0 {
			t.Fatalf("%v: nothing clipped", c)
		}
		obs.ClipSigma = 0.04
		obj := newObjective(obs, c.kind, 1e-3, 0.1, 2)
		p := brdf.Params{Kind: c.kind, Diffuse: brdf.RGB{0.3, 0.5, 0.4}, Specular: brdf.RGB{0.2, 0.3, 0.1}, Roughness: 0.35}
		if c.kind == brdf.Dielectric {
			p.Specular = brdf.RGB{0.2, 0.2, 0.2}
		}
		if c.kind == brdf.Metal {
			p.Diffuse = brdf.RGB{}
		}
		var x [brdf.MaxParams]float64
		xs := p.Vector(x[:0])
		f := func(v []float64) float64 {
			q := brdf.Params{Kind: c.kind}
			if err := q.FromVector(v); err != nil {
				t.Fatal(err)
			}
			return obj.eval(&q, nil)
		}
		want := fd.Gradient(nil, f, xs, &fd.Settings{Formula: fd.Central, Step: 1e-6})
		got := make([]float64, len(xs))
		obj.eval(&p, got)
		for k := range got {
			if d := math.Abs(got[k] - want[k]); d > 1e-6*math.Max(math.Abs(want[k]), 1e-3) {
				t.Errorf("%v: d/dp[%d] = %.9g, finite difference (gonum diff/fd) %.9g", c, k, got[k], want[k])
			}
		}
		obj.close()
	}

	// One clipped channel: loss, derivative and Gauss-Newton weight of
	// the deviance residual, from its definition with finite differences.
	const s, delta = 0.05, 0.1
	for _, r := range []float64{-0.4, -0.1, -0.01, 0, 0.02, 0.1, 0.3} {
		loss := func(r float64) float64 {
			n, _ := normalTail(r / s)
			u := s * math.Sqrt(2*n)
			return delta * delta * (math.Sqrt(1+(u/delta)*(u/delta)) - 1)
		}
		l, dr, gw := censoredTerm(r, s, delta)
		if math.Abs(l-loss(r)) > 1e-15 {
			t.Errorf("r = %g: loss %g, definition %g", r, l, loss(r))
		}
		wantD := fd.Derivative(loss, r, &fd.Settings{Formula: fd.Central, Step: 1e-6})
		if math.Abs(dr-wantD) > 1e-7*math.Max(math.Abs(wantD), 1e-3) {
			t.Errorf("r = %g: d loss/dr %.9g, finite difference %.9g", r, dr, wantD)
		}
		// Gauss-Newton on rho(u): (rho'(u)/u) (du/dr)^2.
		du := fd.Derivative(func(r float64) float64 { n, _ := normalTail(r / s); return s * math.Sqrt(2*n) }, r, &fd.Settings{Formula: fd.Central, Step: 1e-6})
		n, _ := normalTail(r / s)
		u := s * math.Sqrt(2*n)
		wantW := du * du / math.Sqrt(1+(u/delta)*(u/delta))
		if math.Abs(gw-wantW) > 1e-6*math.Max(wantW, 1e-6) {
			t.Errorf("r = %g: Gauss-Newton weight %.9g, from the definition %.9g", r, gw, wantW)
		}
	}
}

// TestRecoveryClipped: the test's own glTF Appendix B render of a sphere
// (synth_test.go) with 2% noise and the brightest 15% of the observations
// clipped in some channel, as an over-exposed photo clips its highlights.
// Fitted with the clipped channels as censored observations (their noise
// scale the known 2%), every parameter must lie within 2.5 sigma of the
// truth. The same photos with the clipped pixels left out (the rejection of
// saturated pixels) must give an F0 farther from the truth: near the
// highlight only the pixels whose noise was negative stay below the clip.
func TestRecoveryClipped(t *testing.T) {
	for _, c := range []recoveryCase{
		{brdf.Metal, [3]float64{}, [3]float64{0.95, 0.64, 0.54}, 0.45},
		{brdf.Dielectric, [3]float64{0.6, 0.3, 0.15}, [3]float64{0.04, 0.04, 0.04}, 0.45},
	} {
		rng := rand.New(rand.NewPCG(21, 22))
		obs := sphereScene(40).render(c.kind, c.diffuse, c.f0, c.rough, 0.02, rng)
		nc := clipObservations(obs, quantile(obs, 0.85))
		obs.ClipSigma = 0.02
		dropped := dropCensored(obs)
		truth := truthParams(c.kind, c.diffuse, c.f0, c.rough)
		var want [brdf.MaxParams]float64
		truth.Vector(want[:0])
		np := c.kind.NumParams()
		f0Err := func(res *SegmentFit) float64 {
			e := 0.0
			for k := 0; k < 3; k++ {
				e += math.Abs(res.Params.Specular[k] - truth.Specular[k])
			}
			return e
		}
		cens, err := FitSegment(context.Background(), obs, c.kind, Options{Threads: 2})
		if err != nil {
			t.Fatal(err)
		}
		drop, err := FitSegment(context.Background(), dropped, c.kind, Options{Threads: 2})
		if err != nil {
			t.Fatal(err)
		}
		var got, sig [brdf.MaxParams]float64
		cens.Params.Vector(got[:0])
		cens.Sigma.Vector(sig[:0])
		for k := 0; k < np; k++ {
			if z := (got[k] - want[k]) / sig[k]; !(math.Abs(z) <= 2.5) {
				t.Errorf("%v param %d: censored fit %.5f ± %.2g, truth %.5f (%.1f sigma)", c, k, got[k], sig[k], want[k], z)
			}
		}
		t.Logf("%v: %d of %d observations clipped (%d censored in the fit); F0 error (sum over channels) censored %.4f, clipped pixels dropped %.4f; roughness %.4f vs %.4f (truth %.2f)",
			c, nc, obs.Len(), cens.Censored, f0Err(cens), f0Err(drop), cens.Params.Roughness, drop.Params.Roughness, c.rough)
		if cens.Censored != nc {
			t.Errorf("fit reports %d censored observations, %d were clipped", cens.Censored, nc)
		}
		if !(f0Err(cens) < f0Err(drop)) {
			t.Errorf("%v: F0 error with censored observations %.4f, not below the one with them dropped %.4f", c, f0Err(cens), f0Err(drop))
		}
	}
}
