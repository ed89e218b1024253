package fit

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/diff/fd"

	"patina/assets/capture"
	"patina/brdf"
	"patina/render"
	"patina/render/refcheck"
)

// TestIndirectFactorsFormFactor checks the cosine-weighted ray estimate of
// the indirect factor against the configuration factor of a differential
// planar element to a parallel square centred above it. With the square
// (a ceiling of half-width a at height c) lit evenly by unit irradiance at
// normal incidence, K is exactly that configuration factor: four times the
// corner case F = 1/(2 pi) [X/sqrt(1+X^2) atan(Y/sqrt(1+X^2)) +
// Y/sqrt(1+Y^2) atan(X/sqrt(1+Y^2))], X = Y = a/c (Howell's catalogue of
// radiation configuration factors, differential element to a parallel
// rectangle with its normal through a corner; from memory).
func TestIndirectFactorsFormFactor(t *testing.T) {
	const a, c = 1.0, 0.8
	m := &render.Mesh{
		Positions: []float32{
			// receiver, a 2 mm square at z = 0 facing +z
			-0.001, -0.001, 0, 0.001, -0.001, 0, 0.001, 0.001, 0, -0.001, 0.001, 0,
			// ceiling at z = c facing -z
			-a, -a, c, a, -a, c, a, a, c, -a, a, c,
		},
		Indices:       []uint32{0, 1, 2, 0, 2, 3, 4, 6, 5, 4, 7, 6},
		Segments:      []int32{0, 0, 1, 1},
		SegmentLabels: []render.SegmentLabel{{Label: 0}, {Label: 1}},
	}
	scene, err := render.NewScene(m, 1)
	if err != nil {
		t.Fatal(err)
	}
	lights := []photoLight{{kind: capture.LightDirectional, dir: render.V3(0, 0, -1), power: [3]float64{1, 0.5, 2}}}
	k := make([]float32, 6)
	const samples = 20000
	indirectFactors(render.V3(0, 0, 0), render.V3(0, 0, 1), render.V3(0, 0, 1), lights, scene, 1e-6, []int{0, 1}, 2, samples, 1, 0, 0, k, nil)
	x := a / c
	corner := 1 / (2 * math.Pi) * 2 * x / math.Sqrt(1+x*x) * math.Atan(x/math.Sqrt(1+x*x))
	want := 4 * corner
	// Binomial standard error of the hit fraction, sqrt(F(1-F)/N) = 0.0035;
	// the stratification only lowers it. Four of them.
	for ch, p := range []float64{1, 0.5, 2} {
		if got := float64(k[3+ch]) / p; math.Abs(got-want) > 4*math.Sqrt(want*(1-want)/samples) {
			t.Errorf("channel %d: K = %.4f, configuration factor %.4f", ch, got, want)
		}
		if k[ch] != 0 {
			t.Errorf("the receiver's own segment got K %v", k[ch])
		}
	}
	t.Logf("K %.4f, configuration factor %.4f", k[3], want)
}

// TestObjectiveGradientWithIndirect repeats the gradient check of the
// objective with the indirect term present, against central finite
// differences (gonum diff/fd), for every model kind.
func TestObjectiveGradientWithIndirect(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for _, c := range recoveryGrid()[:5] {
		obs := sphereScene(16).render(c.kind, c.diffuse, c.f0, c.rough, 0.05, rng)
		n := obs.Len()
		obs.AR, obs.AG, obs.AB = make([]float32, n), make([]float32, n), make([]float32, n)
		for i := 0; i < n; i++ {
			obs.AR[i], obs.AG[i], obs.AB[i] = float32(rng.Float64()), float32(rng.Float64()), float32(rng.Float64())
		}
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
				t.Errorf("%v: d/dp[%d] = %.9g, finite difference %.9g", c, k, got[k], want[k])
			}
		}
		obj.close()
	}
}

// TestDesignEffectAgainstScipy checks the intraclass correlation behind the
// design effect: with F = MSB/MSW from scipy.stats.f_oneway (Debian
// python3-scipy) on the same groups, rho = (F - 1) / (F + m0 - 1)
// (Snedecor and Cochran, "Statistical Methods", 1989, section 13.11).
func TestDesignEffectAgainstScipy(t *testing.T) {
	refcheck.RequirePython(t, map[string]string{"scipy": "python3-scipy", "numpy": "python3-numpy"})
	rng := rand.New(rand.NewPCG(8, 9))
	var groups [][]float64
	var gs []groupStat
	for g := 0; g < 7; g++ {
		off := 0.3 * rng.NormFloat64()
		n := 20 + rng.IntN(30)
		var v []float64
		var st groupStat
		for i := 0; i < n; i++ {
			x := off + rng.NormFloat64()
			v = append(v, x)
			st.n++
			st.sum += x
			st.sum2 += x * x
		}
		groups = append(groups, v)
		gs = append(gs, st)
	}
	arg, _ := json.Marshal(groups)
	out := refcheck.RunPython(t, `
import json, sys
from scipy.stats import f_oneway
g = json.loads(sys.argv[1])
print(json.dumps(float(f_oneway(*g).statistic)))
`, string(arg))
	var F float64
	if err := json.Unmarshal(out, &F); err != nil {
		t.Fatal(err)
	}
	var N, sumN2 float64
	for _, g := range gs {
		N += g.n
		sumN2 += g.n * g.n
	}
	k := float64(len(gs))
	m0 := (N - sumN2/N) / (k - 1)
	rho := math.Max((F-1)/(F+m0-1), 0)
	want := 1 + (N/k-1)*rho
	if got := designEffect(gs); math.Abs(got-want) > 1e-9*want {
		t.Errorf("design effect %.12g, from scipy's F %.12g", got, want)
	}
	t.Logf("F %.4f, rho %.4f, design effect %.3f", F, rho, want)
	if designEffect(gs[:1]) != 1 {
		t.Error("one group: design effect not 1")
	}
}
