package brdf

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

type sampleCase struct {
	name  string
	p     Params
	theta float64 // view angle from the normal, degrees
}

var sampleCases = []sampleCase{
	{"plastic rough", Params{Kind: Dielectric, Diffuse: RGB{0.6, 0.5, 0.4}, Specular: RGB{0.04, 0.04, 0.04}, Roughness: 0.7}, 30},
	{"plastic glossy grazing", Params{Kind: Dielectric, Diffuse: RGB{0.3, 0.3, 0.3}, Specular: RGB{0.04, 0.04, 0.04}, Roughness: 0.35}, 70},
	{"gold", Params{Kind: Metal, Specular: RGB{0.94, 0.79, 0.37}, Roughness: 0.4}, 45},
	{"metal very rough grazing", Params{Kind: Metal, Specular: RGB{0.9, 0.9, 0.9}, Roughness: 1}, 80},
	{"free", Params{Kind: Free, Diffuse: RGB{0.1, 0.8, 0.2}, Specular: RGB{0.5, 0.2, 0.9}, Roughness: 0.5}, 10},
	{"normal view", Params{Kind: Free, Diffuse: RGB{0.5, 0.5, 0.5}, Specular: RGB{0.3, 0.3, 0.3}, Roughness: 0.6}, 0},
}

// sampleFunc is the sampler chiSquare draws from: Sample, or a candidate.
var sampleFunc = Sample

func viewDir(deg float64) Vec { return Spherical(deg*math.Pi/180, 0.3) }

// lostProbability returns the probability that a specular sample reflects
// below the horizon: 1 minus the integral, over the normals whose
// reflection stays above, of the visible-normal density
// D_wo(h) = G1(wo) max(0, wo.h) D(h) / wo.n (Heitz 2018), written
// here from the paper, independently of PDF.
func lostProbability(alpha, thetaDeg float64) float64 {
	th := thetaDeg * math.Pi / 180
	kept := albedoH(func(wo, wi Vec) float64 {
		h := wo.Add(wi).Normalize()
		dwo := G1(alpha, wo.Z) * math.Max(0, wo.Dot(h)) * D(alpha, h.Z) / wo.Z
		return dwo / (wi.Z * 4 * wo.Dot(h)) // albedoH's measure is wi.Z 4 (wo.h) d omega_h
	}, th, alpha, 48)
	return 1 - kept
}

// Every sample's weight is Eval * cos / pdf and its pdf is PDF
// (the one-sample estimator's definition; Veach 1997, chapter 9).
func TestSampleWeightAndPDF(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, sc := range sampleCases {
		wo := viewDir(sc.theta)
		for i := 0; i < 20000; i++ {
			u := [3]float64{rng.Float64(), rng.Float64(), rng.Float64()}
			wi, pdf, w, ok := Sample(&sc.p, wo, u)
			if !ok {
				if pdf != 0 || w != (RGB{}) {
					t.Fatalf("%s: failed sample with pdf %g weight %v", sc.name, pdf, w)
				}
				continue
			}
			if math.Abs(wi.Len()-1) > 1e-12 || wi.Z <= 0 {
				t.Fatalf("%s: sample %v not a unit direction above the horizon", sc.name, wi)
			}
			if want := PDF(&sc.p, wo, wi); relErr(pdf, want) > 1e-12 {
				t.Fatalf("%s: Sample pdf %g, PDF %g", sc.name, pdf, want)
			}
			f := Eval(&sc.p, wo, wi)
			for c := 0; c < 3; c++ {
				if want := f[c] * wi.Z / pdf; relErr(w[c], want) > 1e-12 {
					t.Fatalf("%s: weight %g, Eval cos / pdf %g", sc.name, w[c], want)
				}
			}
		}
	}
	// No sample for a view below the horizon.
	if _, _, _, ok := Sample(&sampleCases[0].p, Vec{0, 0.6, -0.8}, [3]float64{0.5, 0.5, 0.5}); ok {
		t.Error("Sample succeeded for a view below the horizon")
	}
}

// PDF integrates to 1 over the sphere minus the specular probability
// times the probability that a visible normal reflects wo below the
// horizon (a density integrates to 1, Physically Based Rendering, 3rd
// ed., chapter 13; the lost mass is counted, from Heitz 2018's density).
func TestPDFIntegral(t *testing.T) {
	for _, sc := range sampleCases {
		wo := viewDir(sc.theta)
		total := sphereIntegral(func(w Vec) float64 { return PDF(&sc.p, wo, w) }, 32, 32, 8)
		ps := SpecularProbability(&sc.p, wo)
		lost := lostProbability(sc.p.Alpha(), sc.theta)
		want := 1 - ps*lost
		if math.Abs(total-want) > 2e-5 {
			t.Errorf("%s: integral of PDF %.6f, want 1 - %.4f x %.6f = %.6f", sc.name, total, ps, lost, want)
		}
		t.Logf("%s: p_spec %.4f, lost below horizon %.5f, integral %.6f", sc.name, ps, lost, total)
	}
	// The lost mass is real for rough grazing views: not hidden.
	if lost := lostProbability(1, 80); lost < 0.05 {
		t.Errorf("alpha 1 at 80 deg: lost probability %g, expected a sizeable share", lost)
	}
}

// chiSquare bins n samples of Sample for (p, wo) on the sphere
// (binsMu x binsPhi equal-area bins of the upper hemisphere, plus one bin
// for failed samples) and compares the counts with the expectation from
// pdf integrated over each bin. Bins expecting fewer than 5 are pooled
// (Cochran's rule, common practice). It returns the statistic, the
// degrees of freedom and the p-value from gonum's chi-squared
// distribution.
func chiSquare(p *Params, wo Vec, pdf func(wi Vec) float64, lostProb float64, n int, seed uint64) (stat float64, dof int, pvalue float64) {
	const binsMu, binsPhi = 16, 32
	counts := make([]float64, binsMu*binsPhi+1)
	rng := rand.New(rand.NewPCG(seed, 7))
	for i := 0; i < n; i++ {
		u := [3]float64{rng.Float64(), rng.Float64(), rng.Float64()}
		wi, _, _, ok := sampleFunc(p, wo, u)
		if !ok {
			counts[binsMu*binsPhi]++
			continue
		}
		bi := min(int(wi.Z*binsMu), binsMu-1)
		phi := math.Atan2(wi.Y, wi.X)
		if phi < 0 {
			phi += 2 * math.Pi
		}
		bj := min(int(phi/(2*math.Pi)*binsPhi), binsPhi-1)
		counts[bi*binsPhi+bj]++
	}
	expect := make([]float64, len(counts))
	for i := 0; i < binsMu; i++ {
		for j := 0; j < binsPhi; j++ {
			expect[i*binsPhi+j] = float64(n) * binIntegral(pdf, i, j, binsMu, binsPhi, 8)
		}
	}
	expect[binsMu*binsPhi] = float64(n) * lostProb
	var poolObs, poolExp float64
	cells := 0
	for i := range counts {
		if expect[i] < 5 {
			poolObs += counts[i]
			poolExp += expect[i]
			continue
		}
		d := counts[i] - expect[i]
		stat += d * d / expect[i]
		cells++
	}
	if poolExp >= 5 {
		d := poolObs - poolExp
		stat += d * d / poolExp
		cells++
	} else if poolObs > 0 && poolExp == 0 {
		return math.Inf(1), cells - 1, 0 // samples where the density is zero
	}
	dof = cells - 1
	return stat, dof, distuv.ChiSquared{K: float64(dof)}.Survival(stat)
}

// Chi-square goodness of fit of Sample against PDF on a binned sphere
// (Pearson's test; p-value from gonum stat/distuv ChiSquared), the lost
// specular mass as one more bin. Fixed seeds make the test deterministic.
func TestSampleChiSquare(t *testing.T) {
	const n = 200000
	for i, sc := range sampleCases {
		wo := viewDir(sc.theta)
		lost := SpecularProbability(&sc.p, wo) * lostProbability(sc.p.Alpha(), sc.theta)
		stat, dof, pv := chiSquare(&sc.p, wo, func(w Vec) float64 { return PDF(&sc.p, wo, w) }, lost, n, uint64(11+i))
		t.Logf("%s: chi2 %.1f, dof %d, p-value %.3f", sc.name, stat, dof, pv)
		if pv < 1e-3 {
			t.Errorf("%s: Sample does not follow PDF: chi2 %.1f with %d dof, p-value %.2g", sc.name, stat, dof, pv)
		}
	}
}

// The chi-square check can fail: the same samples against the PDF of a
// slightly different roughness are rejected.
func TestSampleChiSquareDetectsMismatch(t *testing.T) {
	sc := sampleCases[2]
	wo := viewDir(sc.theta)
	other := sc.p
	other.Roughness *= 1.05
	lost := SpecularProbability(&other, wo) * lostProbability(other.Alpha(), sc.theta)
	_, _, pv := chiSquare(&sc.p, wo, func(w Vec) float64 { return PDF(&other, wo, w) }, lost, 200000, 99)
	if pv > 1e-6 {
		t.Errorf("a 5%% roughness mismatch went unnoticed: p-value %.3g", pv)
	}
}

// The lobe probability follows the parameters: 1 without a diffuse term,
// within [0.05, 0.95] otherwise, rising towards grazing views as Fresnel
// reflectance grows.
func TestSpecularProbability(t *testing.T) {
	metal := Params{Kind: Metal, Specular: RGB{0.9, 0.8, 0.5}, Roughness: 0.3}
	if ps := SpecularProbability(&metal, viewDir(30)); ps != 1 {
		t.Errorf("metal: p_spec %g, want 1", ps)
	}
	plastic := Params{Kind: Dielectric, Diffuse: RGB{0.8, 0.8, 0.8}, Specular: RGB{0.04, 0.04, 0.04}, Roughness: 0.3}
	a, b := SpecularProbability(&plastic, viewDir(0)), SpecularProbability(&plastic, viewDir(80))
	if !(a >= 0.05 && a < b && b <= 0.95) {
		t.Errorf("plastic: p_spec %g at normal view, %g at 80 deg", a, b)
	}
}
