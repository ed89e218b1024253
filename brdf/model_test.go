package brdf

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
)

// randomDir returns a unit direction above the horizon with cos theta >= minMu.
func randomDir(rng *rand.Rand, minMu float64) Vec {
	mu := minMu + (1-minMu)*rng.Float64()
	phi := 2 * math.Pi * rng.Float64()
	st := math.Sqrt(1 - mu*mu)
	return Vec{st * math.Cos(phi), st * math.Sin(phi), mu}
}

// randomParams returns parameters of kind k with every entry in [lo, hi]
// and roughness in [rlo, 1-lo].
func randomParams(rng *rand.Rand, k Kind, lo, hi, rlo float64) Params {
	v := make([]float64, k.NumParams())
	for i := range v {
		v[i] = lo + (hi-lo)*rng.Float64()
	}
	v[len(v)-1] = rlo + (1-lo-rlo)*rng.Float64()
	p := Params{Kind: k}
	if err := p.FromVector(v); err != nil {
		panic(err)
	}
	return p
}

// Helmholtz reciprocity (common practice; a property of every physically
// based BRDF): f(wo, wi) = f(wi, wo). Eval's arithmetic is symmetric, so
// the check is exact equality, for values and gradients.
func TestReciprocity(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for i := 0; i < 20000; i++ {
		k := Kind(i % 3)
		p := randomParams(rng, k, 0, 1, 0)
		wo, wi := randomDir(rng, 1e-3), randomDir(rng, 1e-3)
		a, b := Eval(&p, wo, wi), Eval(&p, wi, wo)
		if a != b {
			t.Fatalf("%s %+v: Eval(wo, wi) = %v, Eval(wi, wo) = %v", k, p, a, b)
		}
		var ga, gb Grad
		EvalGrad(&p, wo, wi, &ga)
		EvalGrad(&p, wi, wo, &gb)
		if ga != gb {
			t.Fatalf("%s %+v: gradients differ under swap", k, p)
		}
	}
}

// EvalGrad against central finite differences from gonum's diff/fd
// (an independent numerical derivative), for random parameters and
// directions away from the roughness clamp and the [0, 1] bounds.
func TestEvalGradFiniteDifferences(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	// A fourth-order central stencil (the classical five-point formula,
	// (f(x-2h) - 8 f(x-h) + 8 f(x+h) - f(x+2h)) / 12h) built as a gonum
	// fd.Formula: with h = 5e-4 its truncation error (h^4) and rounding
	// error (eps/h) both stay far below the 1e-6 tolerance, which the
	// second-order fd.Central cannot do for the peaked specular lobe.
	central4 := fd.Formula{
		Stencil:    []fd.Point{{Loc: -2, Coeff: 1.0 / 12}, {Loc: -1, Coeff: -8.0 / 12}, {Loc: 1, Coeff: 8.0 / 12}, {Loc: 2, Coeff: -1.0 / 12}},
		Derivative: 1,
		Step:       5e-4,
	}
	settings := &fd.Settings{Formula: central4}
	worst := 0.0
	for i := 0; i < 600; i++ {
		k := Kind(i % 3)
		p := randomParams(rng, k, 0.01, 0.99, 0.15)
		wo, wi := randomDir(rng, 0.05), randomDir(rng, 0.05)
		var g Grad
		f := EvalGrad(&p, wo, wi, &g)
		if want := Eval(&p, wo, wi); f != want {
			t.Fatalf("EvalGrad value %v != Eval %v", f, want)
		}
		x := p.Vector(nil)
		for c := 0; c < 3; c++ {
			fc := func(v []float64) float64 {
				q := Params{Kind: k}
				if err := q.FromVector(v); err != nil {
					t.Fatal(err)
				}
				return Eval(&q, wo, wi)[c]
			}
			num := fd.Gradient(nil, fc, x, settings)
			for j := range num {
				ana := g[c][j]
				// Relative error, with a floor of 1e-5 of the channel's
				// value for entries that are nearly zero by cancellation.
				den := math.Max(math.Max(math.Abs(ana), math.Abs(num[j])), 1e-5*math.Abs(f[c]))
				if den == 0 {
					continue
				}
				e := math.Abs(ana-num[j]) / den
				worst = math.Max(worst, e)
				if e > 1e-6 {
					t.Errorf("%s %v wo %v wi %v: d f[%d] / d %s = %g analytic, %g central difference (rel. err. %.2g)",
						k, x, wo, wi, c, k.ParamNames()[j], ana, num[j], e)
				}
			}
			for j := len(num); j < MaxParams; j++ {
				if g[c][j] != 0 {
					t.Errorf("%s: gradient entry %d beyond the vector is %g", k, j, g[c][j])
				}
			}
		}
	}
	t.Logf("largest relative error: %.3g", worst)
}

// Below the horizon the model is zero and so is its gradient; below
// MinRoughness the roughness derivative is zero (the clamp).
func TestHorizonAndClamp(t *testing.T) {
	p := Params{Kind: Free, Diffuse: RGB{0.5, 0.5, 0.5}, Specular: RGB{0.04, 0.04, 0.04}, Roughness: 0.5}
	up, down := Vec{0, 0.6, 0.8}, Vec{0, 0.6, -0.8}
	var g Grad
	g[0][0] = 7
	if f := EvalGrad(&p, up, down, &g); f != (RGB{}) || g != (Grad{}) {
		t.Errorf("below the horizon: f %v, grad %v", f, g)
	}
	if f := Eval(&p, down, up); f != (RGB{}) {
		t.Errorf("view below the horizon: f %v", f)
	}
	if PDF(&p, up, down) != 0 {
		t.Error("PDF below the horizon must be 0")
	}
	p.Roughness = MinRoughness / 2
	EvalGrad(&p, up, Vec{0, -0.6, 0.8}, &g)
	if g[0][6] != 0 {
		t.Errorf("roughness derivative below the clamp = %g, want 0", g[0][6])
	}
	if a, b := Eval(&p, up, Vec{0, -0.6, 0.8}), Eval(&Params{Kind: Free, Diffuse: p.Diffuse, Specular: p.Specular, Roughness: MinRoughness}, up, Vec{0, -0.6, 0.8}); a != b {
		t.Errorf("roughness below MinRoughness must evaluate as MinRoughness: %v vs %v", a, b)
	}
}

// The kinds' constraints hold in evaluation: a Dielectric uses Specular[0]
// for every channel and a Metal ignores Diffuse, so a Params filled in by
// hand evaluates like its vector round trip.
func TestKindConstraintsInEval(t *testing.T) {
	wo, wi := Spherical(0.4, 0), Spherical(0.6, 2)
	d := Params{Kind: Dielectric, Diffuse: RGB{0.2, 0.4, 0.6}, Specular: RGB{0.05, 0.5, 0.9}, Roughness: 0.4}
	var q Params
	q.Kind = Dielectric
	if err := q.FromVector(d.Vector(nil)); err != nil {
		t.Fatal(err)
	}
	if Eval(&d, wo, wi) != Eval(&q, wo, wi) {
		t.Error("dielectric: Eval differs from its vector round trip")
	}
	m := Params{Kind: Metal, Diffuse: RGB{1, 1, 1}, Specular: RGB{0.9, 0.6, 0.3}, Roughness: 0.4}
	m0 := m
	m0.Diffuse = RGB{}
	if Eval(&m, wo, wi) != Eval(&m0, wo, wi) {
		t.Error("metal: Diffuse must not contribute")
	}
}

func TestParamsVector(t *testing.T) {
	for _, tc := range []struct {
		k    Kind
		name string
		n    int
	}{{Dielectric, "dielectric", 5}, {Metal, "metal", 4}, {Free, "free", 7}} {
		if tc.k.NumParams() != tc.n || len(tc.k.ParamNames()) != tc.n {
			t.Errorf("%s: NumParams %d, names %d, want %d", tc.k, tc.k.NumParams(), len(tc.k.ParamNames()), tc.n)
		}
		if tc.k.String() != tc.name {
			t.Errorf("String() = %q, want %q", tc.k.String(), tc.name)
		}
		k, err := ParseKind(tc.name)
		if err != nil || k != tc.k {
			t.Errorf("ParseKind(%q) = %v, %v", tc.name, k, err)
		}
	}
	if _, err := ParseKind("plastic"); err == nil {
		t.Error("ParseKind accepted an unknown name")
	} else if ke := (*KindError)(nil); !errors.As(err, &ke) || ke.Name != "plastic" {
		t.Errorf("ParseKind error %v is not a *KindError naming the input", err)
	}
	if Kind(9).String() != "Kind(9)" || Kind(9).NumParams() != 0 {
		t.Error("undefined kind")
	}
	// Documented orders.
	p := Params{Kind: Free, Diffuse: RGB{0.1, 0.2, 0.3}, Specular: RGB{0.4, 0.5, 0.6}, Roughness: 0.7}
	want := []float64{0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7}
	buf := make([]float64, 3, 10)
	got := p.Vector(buf)
	if len(got) != 7 || &got[0] != &buf[0] {
		t.Fatalf("Vector must append to dst[:0]: %v", got)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Fatalf("free vector %v, want %v", got, want)
		}
	}
	p.Kind = Dielectric
	if got := p.Vector(nil); len(got) != 5 || got[3] != 0.4 || got[4] != 0.7 || got[2] != 0.3 {
		t.Errorf("dielectric vector %v", got)
	}
	p.Kind = Metal
	if got := p.Vector(nil); len(got) != 4 || got[0] != 0.4 || got[2] != 0.6 || got[3] != 0.7 {
		t.Errorf("metal vector %v", got)
	}
	var q Params
	q.Kind = Dielectric
	if err := q.FromVector([]float64{0.1, 0.2, 0.3, 0.04, 0.5}); err != nil || q.Specular != (RGB{0.04, 0.04, 0.04}) {
		t.Errorf("dielectric FromVector: %v %+v", err, q)
	}
	q.Kind = Metal
	q.Diffuse = RGB{1, 1, 1}
	if err := q.FromVector([]float64{0.9, 0.8, 0.7, 0.5}); err != nil || q.Diffuse != (RGB{}) || q.Validate() != nil {
		t.Errorf("metal FromVector: %v %+v", err, q)
	}
	// Errors name the entry; p is left unchanged.
	before := q
	for _, bad := range [][]float64{{0.9, 0.8, 0.7}, {0.9, 0.8, 1.5, 0.5}, {0.9, math.NaN(), 0.7, 0.5}, {0.9, 0.8, 0.7, -0.1}} {
		err := q.FromVector(bad)
		var ve *VectorError
		if !errors.As(err, &ve) {
			t.Errorf("FromVector(%v) error %v, want *VectorError", bad, err)
		}
		if q != before {
			t.Errorf("FromVector(%v) changed p", bad)
		}
	}
	err := q.FromVector([]float64{0.9, 0.8, 1.5, 0.5})
	if ve := (*VectorError)(nil); errors.As(err, &ve) && ve.Index != 2 {
		t.Errorf("error index %d, want 2: %v", ve.Index, err)
	}
	v := []float64{-1, 0.5, 2, math.NaN()}
	ClampVector(v)
	if v[0] != 0 || v[1] != 0.5 || v[2] != 1 || v[3] != 0 {
		t.Errorf("ClampVector: %v", v)
	}
	bad := Params{Kind: Dielectric, Specular: RGB{0.04, 0.05, 0.04}, Roughness: 0.5}
	if bad.Validate() == nil {
		t.Error("Validate accepted a dielectric with unequal F0 channels")
	}
	bad = Params{Kind: Free, Diffuse: RGB{0.5, 1.2, 0}, Roughness: 0.5}
	if err := bad.Validate(); err == nil {
		t.Error("Validate accepted diffuse > 1")
	}
}
