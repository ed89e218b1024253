package fit

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/mat"

	"patina/brdf"
)

// TestObjectiveGradient checks the analytic gradient of the whole objective
// (robust loss over every observation, multi-light photos included) against
// central finite differences from gonum's diff/fd, with respect to the
// natural parameters and through the logistic reparameterisation.
func TestObjectiveGradient(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, c := range recoveryGrid()[:5] {
		obs := sphereScene(20).render(c.kind, c.diffuse, c.f0, c.rough, 0.05, rng)
		obj := newObjective(obs, c.kind, 1e-3, 0.1, 2)
		np := c.kind.NumParams()
		// Evaluate away from the truth, where the residuals are large
		// enough to exercise the linear part of the Charbonnier loss.
		p := brdf.Params{Kind: c.kind, Diffuse: brdf.RGB{0.3, 0.5, 0.4}, Specular: brdf.RGB{0.2, 0.3, 0.1}, Roughness: 0.35}
		var x [brdf.MaxParams]float64
		xs := p.Vector(x[:0])
		if c.kind == brdf.Dielectric {
			p.Specular = brdf.RGB{0.2, 0.2, 0.2}
		}
		f := func(v []float64) float64 {
			q := brdf.Params{Kind: c.kind}
			if err := q.FromVector(v); err != nil {
				t.Fatal(err)
			}
			return obj.eval(&q, nil)
		}
		want := fd.Gradient(nil, f, xs, &fd.Settings{Formula: fd.Central, Step: 1e-6})
		got := make([]float64, np)
		obj.eval(&p, got)
		for k := 0; k < np; k++ {
			if d := math.Abs(got[k] - want[k]); d > 1e-6*math.Max(math.Abs(want[k]), 1e-3) {
				t.Errorf("%v: d/dp[%d] = %.9g, finite difference (gonum diff/fd) %.9g", c, k, got[k], want[k])
			}
		}
		// Through theta.
		tp := &thetaProblem{obj: obj, b: newBounds(c.kind, 0.03)}
		tp.params.Kind = c.kind
		var th [brdf.MaxParams]float64
		tp.b.theta(xs, th[:np])
		g := func(v []float64) float64 { f, _ := tp.evalBoth(v); return f }
		wantT := fd.Gradient(nil, g, th[:np], &fd.Settings{Formula: fd.Central, Step: 1e-6})
		_, gotT := tp.evalBoth(th[:np])
		for k := 0; k < np; k++ {
			if d := math.Abs(gotT[k] - wantT[k]); d > 1e-6*math.Max(math.Abs(wantT[k]), 1e-3) {
				t.Errorf("%v: d/dtheta[%d] = %.9g, finite difference %.9g", c, k, gotT[k], wantT[k])
			}
		}
		obj.close()
	}
}

// TestObjectiveDeterministic: the loss and gradient are bit-identical for
// 1, 2 and 5 threads (fixed chunks, ordered reduction).
func TestObjectiveDeterministic(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	c := recoveryGrid()[4]
	obs := sphereScene(60).render(c.kind, c.diffuse, c.f0, c.rough, 0.05, rng)
	if obs.Len() < 3*chunkSize {
		t.Fatalf("only %d observations: the test needs several chunks", obs.Len())
	}
	p := truthParams(c.kind, c.diffuse, c.f0, 0.3)
	var ref []float64
	var refF float64
	for _, th := range []int{1, 2, 5} {
		obj := newObjective(obs, c.kind, 1e-3, 0.1, th)
		g := make([]float64, c.kind.NumParams())
		f := obj.eval(&p, g)
		obj.close()
		if ref == nil {
			ref, refF = g, f
			continue
		}
		if f != refF {
			t.Errorf("threads %d: loss %v != %v", th, f, refF)
		}
		for k := range g {
			if g[k] != ref[k] {
				t.Errorf("threads %d: grad[%d] %v != %v", th, k, g[k], ref[k])
			}
		}
	}
}

// BenchmarkObjective measures one objective-and-gradient pass; ns/obs is
// the wall time per observation (one light each), so 1e6 * ns/obs is the
// time of a pass over a million observations; cpu-ns/obs is the CPU time of
// all threads per observation, which a loaded machine does not inflate.
func BenchmarkObjective(b *testing.B) {
	for _, kind := range []brdf.Kind{brdf.Dielectric, brdf.Metal, brdf.Free} {
		for _, threads := range []int{1, 2} {
			b.Run(kind.String()+"/threads="+string(rune('0'+threads)), func(b *testing.B) {
				sc := planeScene(300)
				sc.photos = sc.photos[:2]
				obs := sc.render(kind, [3]float64{0.5, 0.4, 0.3}, [3]float64{0.3, 0.2, 0.1}, 0.4, 0, nil)
				obj := newObjective(obs, kind, 1e-3, 0.1, threads)
				defer obj.close()
				p := brdf.Params{Kind: kind, Diffuse: brdf.RGB{0.4, 0.4, 0.4}, Specular: brdf.RGB{0.2, 0.2, 0.2}, Roughness: 0.3}
				g := make([]float64, kind.NumParams())
				b.ReportAllocs()
				b.ResetTimer()
				cpu0 := processCPU()
				for i := 0; i < b.N; i++ {
					obj.eval(&p, g)
				}
				cpu := processCPU() - cpu0
				b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(obs.Len()), "ns/obs")
				b.ReportMetric(float64(cpu.Nanoseconds())/float64(b.N)/float64(obs.Len()), "cpu-ns/obs")
				b.ReportMetric(float64(obs.Len()), "obs")
			})
		}
	}
}

// TestLogRatio checks the series against math.Log across and beyond its
// range.
func TestLogRatio(t *testing.T) {
	for y := 0.5; y < 2; y += 0.0001 {
		if d := math.Abs(logRatio(y) - math.Log(y)); d > 1e-13 {
			t.Fatalf("logRatio(%v) = %v, math.Log %v (difference %.2g)", y, logRatio(y), math.Log(y), d)
		}
	}
}

// TestGaussNewtonMatrix checks the objective's Gauss-Newton matrix at the
// truth of noise-free observations, where every residual is 0 and the
// Gauss-Newton approximation equals the true Hessian (Nocedal and Wright,
// "Numerical Optimization", 2006, section 10.1): against the Jacobian of
// the analytic gradient by central finite differences (gonum diff/fd).
func TestGaussNewtonMatrix(t *testing.T) {
	for _, c := range recoveryGrid()[:5] {
		obs := sphereScene(20).render(c.kind, c.diffuse, c.f0, c.rough, 0, nil)
		obj := newObjective(obs, c.kind, 1e-3, 0.1, 2)
		np := c.kind.NumParams()
		truth := truthParams(c.kind, c.diffuse, c.f0, c.rough)
		var x [brdf.MaxParams]float64
		xs := truth.Vector(x[:0])
		hess := make([]float64, np*np)
		grad := make([]float64, np)
		obj.evalHess(&truth, grad, hess)
		want := mat.NewDense(np, np, nil)
		fd.Jacobian(want, func(y, v []float64) {
			q := brdf.Params{Kind: c.kind}
			if err := q.FromVector(v); err != nil {
				t.Fatal(err)
			}
			obj.eval(&q, y)
		}, xs, &fd.JacobianSettings{Formula: fd.Central})
		scale := 0.0
		for k := 0; k < np; k++ {
			scale = math.Max(scale, math.Abs(want.At(k, k)))
		}
		for a := 0; a < np; a++ {
			for b := 0; b < np; b++ {
				if d := math.Abs(hess[a*np+b] - want.At(a, b)); d > 1e-4*scale {
					t.Errorf("%v: H[%d][%d] = %.9g, finite difference of the gradient %.9g", c, a, b, hess[a*np+b], want.At(a, b))
				}
			}
		}
		obj.close()
	}
}
