package fit

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"

	"patina/brdf"
)

// optimizerCases are noisy fits (2% multiplicative noise) of each kind.
func optimizerCases() []*Observations {
	rng := rand.New(rand.NewPCG(5, 6))
	var out []*Observations
	for _, c := range []recoveryCase{recoveryGrid()[0], recoveryGrid()[7], recoveryGrid()[14]} {
		out = append(out, sphereScene(40).render(c.kind, c.diffuse, c.f0, c.rough, 0.02, rng))
	}
	return out
}

// TestOptimizersAgree: Adam, L-BFGS and Levenberg-Marquardt reach the same
// optimum on noisy data (parameters within a tenth of a sigma).
func TestOptimizersAgree(t *testing.T) {
	kinds := []brdf.Kind{brdf.Dielectric, brdf.Metal, brdf.Free}
	for i, obs := range optimizerCases() {
		a, err := FitSegment(context.Background(), obs, kinds[i], Options{Optimizer: Adam, Threads: 2, MaxPasses: 2000})
		must(t, err)
		l, err := FitSegment(context.Background(), obs, kinds[i], Options{Optimizer: LBFGS, Threads: 2})
		must(t, err)
		m, err := FitSegment(context.Background(), obs, kinds[i], Options{Optimizer: LM, Threads: 2})
		must(t, err)
		var pm [brdf.MaxParams]float64
		m.Params.Vector(pm[:0])
		var pa, pl, s [brdf.MaxParams]float64
		a.Params.Vector(pa[:0])
		l.Params.Vector(pl[:0])
		l.Sigma.Vector(s[:0])
		t.Logf("%v: adam %d passes (%s) loss %.9g; lbfgs %d passes (%s) loss %.9g; lm %d passes (%s) loss %.9g", kinds[i], a.Passes, a.Stop, a.Loss, l.Passes, l.Stop, l.Loss, m.Passes, m.Stop, m.Loss)
		for k := 0; k < kinds[i].NumParams(); k++ {
			if math.Abs(pm[k]-pl[k]) > 0.1*s[k] {
				t.Errorf("%v param %d: lm %.6f, lbfgs %.6f (sigma %.2g)", kinds[i], k, pm[k], pl[k], s[k])
			}
			if math.Abs(pa[k]-pl[k]) > 0.1*s[k] {
				t.Errorf("%v param %d: adam %.6f, lbfgs %.6f (sigma %.2g)", kinds[i], k, pa[k], pl[k], s[k])
			}
		}
	}
}

// BenchmarkOptimizers reports the passes over the observations each
// optimiser needs to converge on noisy fits of the three kinds (the
// benchmark that chose L-BFGS as the default).
func BenchmarkOptimizers(b *testing.B) {
	cases := optimizerCases()
	kinds := []brdf.Kind{brdf.Dielectric, brdf.Metal, brdf.Free}
	for _, m := range []Optimizer{LM, LBFGS, Adam} {
		b.Run(string(m), func(b *testing.B) {
			passes := 0
			for i := 0; i < b.N; i++ {
				for k, obs := range cases {
					r, err := FitSegment(context.Background(), obs, kinds[k], Options{Optimizer: m, Threads: 2, MaxPasses: 2000})
					if err != nil {
						b.Fatal(err)
					}
					passes += r.Passes
				}
			}
			b.ReportMetric(float64(passes)/float64(b.N*len(cases)), "passes/fit")
		})
	}
}
