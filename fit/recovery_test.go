package fit

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"patina/brdf"
)

type recoveryCase struct {
	kind    brdf.Kind
	diffuse [3]float64
	f0      [3]float64
	rough   float64
}

// recoveryGrid spans each model over colours, F0 and roughness, including
// a rough dielectric whose highlight is broad and a near-mirror metal.
func recoveryGrid() []recoveryCase {
	var g []recoveryCase
	for _, r := range []float64{0.2, 0.45, 0.8} {
		g = append(g,
			recoveryCase{brdf.Dielectric, [3]float64{0.6, 0.3, 0.15}, [3]float64{0.04, 0.04, 0.04}, r},
			recoveryCase{brdf.Dielectric, [3]float64{0.08, 0.4, 0.7}, [3]float64{0.08, 0.08, 0.08}, r},
			recoveryCase{brdf.Metal, [3]float64{}, [3]float64{0.95, 0.64, 0.54}, r},
			recoveryCase{brdf.Metal, [3]float64{}, [3]float64{0.91, 0.92, 0.92}, r},
			recoveryCase{brdf.Free, [3]float64{0.5, 0.45, 0.3}, [3]float64{0.3, 0.2, 0.1}, r},
		)
	}
	return g
}

func (c recoveryCase) String() string {
	return fmt.Sprintf("%v/d=%.2v/f0=%.2v/r=%.2g", c.kind, c.diffuse, c.f0, c.rough)
}

// TestRecoveryExact fits noise-free observations rendered by the test's own
// glTF 2.0 Appendix B model (synth_test.go) on a sphere and a plane under
// directional and point lights, and requires every parameter to 1e-4.
func TestRecoveryExact(t *testing.T) {
	grid := recoveryGrid()
	if testing.Short() {
		grid = grid[:5]
	}
	for _, geom := range []struct {
		name  string
		scene *testScene
	}{{"sphere", sphereScene(36)}, {"plane", planeScene(36)}} {
		for _, c := range grid {
			t.Run(geom.name+"/"+c.String(), func(t *testing.T) {
				obs := geom.scene.render(c.kind, c.diffuse, c.f0, c.rough, 0, nil)
				res, err := FitSegment(context.Background(), obs, c.kind, Options{Threads: 2})
				if err != nil {
					t.Fatal(err)
				}
				truth := truthParams(c.kind, c.diffuse, c.f0, c.rough)
				var got, want [brdf.MaxParams]float64
				res.Params.Vector(got[:0])
				truth.Vector(want[:0])
				worst := 0.0
				for k := 0; k < c.kind.NumParams(); k++ {
					worst = math.Max(worst, math.Abs(got[k]-want[k]))
				}
				t.Logf("obs %d near-specular %d passes %d stop %q worst |error| %.2g loss %.3g", res.Observations, res.NearSpecular, res.Passes, res.Stop, worst, res.Loss)
				if worst > 1e-4 {
					t.Errorf("recovered %v, want %v (worst error %.3g > 1e-4)", got[:c.kind.NumParams()], want[:c.kind.NumParams()], worst)
				}
			})
		}
	}
}

// TestRecoveryNoise adds 2% multiplicative Gaussian noise and checks the
// reported one-sigma uncertainty against the actual error: for a correct
// Gauss-Newton covariance the error lies within 2 sigma for 95.4% of the
// parameters (normal distribution). Parameters of one fit are correlated,
// so one seed's count scatters more than independent draws would: the test
// requires at least 80% within 2 sigma and none beyond 4.5 sigma (a
// covariance too small by a factor of two fails it); TestSigmaCalibration
// checks the size of sigma itself over repeated draws.
func TestRecoveryNoise(t *testing.T) {
	grid := recoveryGrid()
	if testing.Short() {
		grid = grid[:5]
	}
	rng := rand.New(rand.NewPCG(7, 11))
	total, within2 := 0, 0
	for _, geom := range []struct {
		name  string
		scene *testScene
	}{{"sphere", sphereScene(36)}, {"plane", planeScene(36)}} {
		for _, c := range grid {
			obs := geom.scene.render(c.kind, c.diffuse, c.f0, c.rough, 0.02, rng)
			res, err := FitSegment(context.Background(), obs, c.kind, Options{Threads: 2})
			if err != nil {
				t.Fatal(err)
			}
			truth := truthParams(c.kind, c.diffuse, c.f0, c.rough)
			var got, want, sig [brdf.MaxParams]float64
			res.Params.Vector(got[:0])
			truth.Vector(want[:0])
			res.Sigma.Vector(sig[:0])
			line := ""
			for k := 0; k < c.kind.NumParams(); k++ {
				z := (got[k] - want[k]) / sig[k]
				total++
				if math.Abs(z) <= 2 {
					within2++
				}
				if !(math.Abs(z) <= 4.5) {
					t.Errorf("%s/%v param %d: got %.5f ± %.2g, truth %.5f (%.1f sigma)", geom.name, c, k, got[k], sig[k], want[k], z)
				}
				line += fmt.Sprintf(" %.4f±%.4f(%+.1fσ)", got[k], sig[k], z)
			}
			t.Logf("%s/%v:%s rms log residual %.4f", geom.name, c, line, res.RMSLog)
		}
	}
	frac := float64(within2) / float64(total)
	t.Logf("%d of %d parameters (%.1f%%) within 2 sigma of the truth", within2, total, 100*frac)
	if frac < 0.8 {
		t.Errorf("only %.1f%% of parameters within 2 sigma (expected about 95%%): the reported sigma is too small", 100*frac)
	}
}

// TestSigmaCalibration repeats the noisy fit over independent noise draws
// and compares the spread of the estimates with the reported sigma: for a
// correct covariance the ratio is 1, and with 30 draws the sample standard
// deviation has a relative standard error of about 1/sqrt(2*30) = 13%
// (normal theory), so the ratio must lie in [0.65, 1.4].
func TestSigmaCalibration(t *testing.T) {
	draws := 30
	if testing.Short() {
		draws = 10
	}
	for _, tc := range []struct {
		name  string
		scene *testScene
		c     recoveryCase
	}{
		{"plane", planeScene(30), recoveryCase{brdf.Dielectric, [3]float64{0.6, 0.3, 0.15}, [3]float64{0.04, 0.04, 0.04}, 0.8}},
		{"sphere", sphereScene(30), recoveryCase{brdf.Metal, [3]float64{}, [3]float64{0.95, 0.64, 0.54}, 0.8}},
		{"sphere", sphereScene(30), recoveryCase{brdf.Free, [3]float64{0.5, 0.45, 0.3}, [3]float64{0.3, 0.2, 0.1}, 0.45}},
	} {
		t.Run(tc.name+"/"+tc.c.String(), func(t *testing.T) {
			rng := rand.New(rand.NewPCG(3, 5))
			np := tc.c.kind.NumParams()
			truth := truthParams(tc.c.kind, tc.c.diffuse, tc.c.f0, tc.c.rough)
			var want, sum2, sig [brdf.MaxParams]float64
			truth.Vector(want[:0])
			for i := 0; i < draws; i++ {
				obs := tc.scene.render(tc.c.kind, tc.c.diffuse, tc.c.f0, tc.c.rough, 0.02, rng)
				res, err := FitSegment(context.Background(), obs, tc.c.kind, Options{Threads: 2})
				if err != nil {
					t.Fatal(err)
				}
				var got, s [brdf.MaxParams]float64
				res.Params.Vector(got[:0])
				res.Sigma.Vector(s[:0])
				for k := 0; k < np; k++ {
					sum2[k] += (got[k] - want[k]) * (got[k] - want[k])
					sig[k] += s[k] / float64(draws)
				}
			}
			lo, hi := 0.65, 1.4
			if testing.Short() {
				lo, hi = 0.5, 1.8 // 10 draws: relative standard error 22%
			}
			for k := 0; k < np; k++ {
				sd := math.Sqrt(sum2[k] / float64(draws))
				ratio := sd / sig[k]
				t.Logf("param %d: spread of estimates %.5f, mean reported sigma %.5f, ratio %.2f", k, sd, sig[k], ratio)
				if ratio < lo || ratio > hi {
					t.Errorf("param %d: spread %.5f vs reported sigma %.5f (ratio %.2f outside [%.2f, %.2f])", k, sd, sig[k], ratio, lo, hi)
				}
			}
		})
	}
}
