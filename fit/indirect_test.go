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

// TestIndirectRaysAgainstQuadrature checks the ray entries and their use
// (estimateAmbient) against a brute-force integral over the emitter. A
// small receiver at the origin faces a square ceiling of half-width a at
// height c, lit from below at normal incidence by a directional light. The
// ceiling is a glossy dielectric, the receiver a metal; both BRDFs are the
// test's own glTF Appendix B model (synth_test.go). The reference is the
// midpoint rule over the ceiling, dw cos(theta_x) = cos(theta_x)
// cos(theta_y) / r^2 dA, of
//
//	E_ind = integral of L(y -> x) cos(theta_x) dw               (irradiance)
//	L_o   = integral of f_x(wo, wi) L(y -> x) cos(theta_x) dw   (the metal's reflection)
//	L(y -> x) = f_y(x - y, light) E
//
// (the rendering equation's one-bounce term: Kajiya, "The rendering
// equation", SIGGRAPH 1986). The rays' estimates must agree within four of
// their own standard errors.
func TestIndirectRaysAgainstQuadrature(t *testing.T) {
	const a, c = 1.0, 0.6
	m := &render.Mesh{
		Positions: []float32{
			-0.001, -0.001, 0, 0.001, -0.001, 0, 0.001, 0.001, 0, -0.001, 0.001, 0,
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
	irr := [3]float64{2, 1.5, 1}
	lights := []photoLight{{kind: capture.LightDirectional, dir: render.V3(0, 0, -1), power: irr}}
	ceiling := brdf.Params{Kind: brdf.Dielectric, Diffuse: brdf.RGB{0.5, 0.4, 0.3}, Specular: brdf.RGB{0.04, 0.04, 0.04}, Roughness: 0.4}
	metal := brdf.Params{Kind: brdf.Metal, Specular: brdf.RGB{0.95, 0.64, 0.54}, Roughness: 0.5}
	woW := v3{0.5, 0.2, 0.85}.norm()
	frame := render.NewFrame(render.V3(0, 0, 1))
	wo := frame.ToLocal(render.V3(woW.x, woW.y, woW.z))

	// Reference by the midpoint rule.
	const grid = 600
	var eRef, lRef [3]float64
	h := 2 * a / grid
	for i := 0; i < grid; i++ {
		for j := 0; j < grid; j++ {
			y := v3{-a + (float64(i)+0.5)*h, -a + (float64(j)+0.5)*h, c}
			d := y.norm()
			r2 := y.dot(y)
			g := d.z * d.z / r2 * h * h // cos(theta_x) cos(theta_y) / r^2 dA; cos(theta_y) = d.z too
			fy := gltfBRDF(brdf.Dielectric, ceiling.Diffuse, ceiling.Specular, ceiling.Roughness, v3{0, 0, -1}, d.mul(-1), v3{0, 0, -1})
			fx := gltfBRDF(brdf.Metal, [3]float64{}, metal.Specular, metal.Roughness, v3{0, 0, 1}, woW, d)
			for ch := 0; ch < 3; ch++ {
				L := fy[ch] * irr[ch]
				eRef[ch] += L * g
				lRef[ch] += fx[ch] * L * g
			}
		}
	}

	// The rays, in independent batches for the standard error.
	const batches, samples = 40, 500
	var eSum, eSum2, lSum, lSum2 [3]float64
	for b := 0; b < batches; b++ {
		set := &ObservationSet{Segments: []*SegmentObservations{{Name: "metal", Kind: brdf.Metal}, {Name: "ceiling", Kind: brdf.Dielectric}}}
		ob := &set.Segments[0].Obs
		ob.AddLight(brdf.Vec{Z: 1}, [3]float64{}) // a dark lamp: the observation needs one
		ob.Add(wo, [3]float64{1, 1, 1}, 0)
		k := make([]float32, 6)
		var rays []indirectRay
		indirectFactors(render.V3(0, 0, 0), render.V3(0, 0, 1), render.V3(0, 0, 1), lights, scene, 1e-6, []int{0, 1}, 2, samples, uint64(b), 0, 0, k, &rays)
		ob.IndSegs, ob.IndK = 2, k
		for _, r := range rays {
			ob.AddRay(r.dir, r.seg, r.wo, r.wl, r.e, true)
		}
		set.estimateAmbient([]brdf.Params{metal, ceiling})
		lo := modelAt(ob, 0, &metal)
		for ch := 0; ch < 3; ch++ {
			e := float64([]float32{ob.AR[0], ob.AG[0], ob.AB[0]}[ch])
			eSum[ch] += e
			eSum2[ch] += e * e
			lSum[ch] += lo[ch]
			lSum2[ch] += lo[ch] * lo[ch]
		}
	}
	for ch := 0; ch < 3; ch++ {
		for _, q := range []struct {
			name           string
			sum, sum2, ref float64
		}{{"indirect irradiance", eSum[ch], eSum2[ch], eRef[ch]}, {"metal's reflected radiance", lSum[ch], lSum2[ch], lRef[ch]}} {
			mean := q.sum / batches
			se := math.Sqrt(math.Max(q.sum2/batches-mean*mean, 0) / (batches - 1))
			t.Logf("channel %d %s: rays %.5f ± %.5f, quadrature %.5f", ch, q.name, mean, se, q.ref)
			if math.Abs(mean-q.ref) > 4*se+1e-4*q.ref {
				t.Errorf("channel %d %s: rays %.5f ± %.5f, quadrature %.5f", ch, q.name, mean, se, q.ref)
			}
		}
	}
}

// TestPooledIndirectRays: nine observations of one photo at the same point
// (the receiver of TestIndirectRaysAgainstQuadrature), eight rays each,
// followed by one of another photo whose lamp is ten times brighter. After
// pooling, the metal's reflected indirect radiance at the middle
// observation must still match the quadrature (mean within four standard
// errors), have about a ninth of the variance of one observation's own
// eight rays (the variance of a mean of nine independent estimates; the
// ratio's sampling error over 60 batches is about 20%, so [0.06, 0.2] is
// allowed), and not see the other photo's rays.
func TestPooledIndirectRays(t *testing.T) {
	const a, c = 1.0, 0.6
	m := &render.Mesh{
		Positions: []float32{
			-0.001, -0.001, 0, 0.001, -0.001, 0, 0.001, 0.001, 0, -0.001, 0.001, 0,
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
	ceiling := brdf.Params{Kind: brdf.Dielectric, Diffuse: brdf.RGB{0.5, 0.4, 0.3}, Specular: brdf.RGB{0.04, 0.04, 0.04}, Roughness: 0.4}
	metal := brdf.Params{Kind: brdf.Metal, Specular: brdf.RGB{0.95, 0.64, 0.54}, Roughness: 0.5}
	woW := v3{0.5, 0.2, 0.85}.norm()
	wo := render.NewFrame(render.V3(0, 0, 1)).ToLocal(render.V3(woW.x, woW.y, woW.z))
	irr := [3]float64{2, 1.5, 1}
	// Reference: the midpoint rule of the previous test, green channel.
	const grid = 400
	ref := 0.0
	h := 2 * a / grid
	for i := 0; i < grid; i++ {
		for j := 0; j < grid; j++ {
			y := v3{-a + (float64(i)+0.5)*h, -a + (float64(j)+0.5)*h, c}
			d := y.norm()
			g := d.z * d.z / y.dot(y) * h * h
			fy := gltfBRDF(brdf.Dielectric, ceiling.Diffuse, ceiling.Specular, ceiling.Roughness, v3{0, 0, -1}, d.mul(-1), v3{0, 0, -1})
			fx := gltfBRDF(brdf.Metal, [3]float64{}, metal.Specular, metal.Roughness, v3{0, 0, 1}, woW, d)
			ref += fx[1] * fy[1] * irr[1] * g
		}
	}
	const batches, samples, nobs = 60, 8, 9
	var ps, ps2, osum, osum2 float64
	for b := 0; b < batches; b++ {
		set := &ObservationSet{Segments: []*SegmentObservations{{Name: "metal", Kind: brdf.Metal}, {Name: "ceiling", Kind: brdf.Dielectric}}}
		ob := &set.Segments[0].Obs
		var own float64
		for i := 0; i <= nobs; i++ {
			photo, power := 0, irr
			if i == nobs {
				photo, power = 1, [3]float64{20, 15, 10}
			}
			lights := []photoLight{{kind: capture.LightDirectional, dir: render.V3(0, 0, -1), power: power}}
			ob.AddLight(brdf.Vec{Z: 1}, [3]float64{})
			ob.Add(wo, [3]float64{1, 1, 1}, photo)
			k := make([]float32, 6)
			var rays []indirectRay
			indirectFactors(render.V3(0, 0, 0), render.V3(0, 0, 1), render.V3(0, 0, 1), lights, scene, 1e-6, []int{0, 1}, 2, samples, uint64(b), photo, i, k, &rays)
			ob.IndSegs = 2
			ob.IndK = append(ob.IndK, k...)
			for _, r := range rays {
				ob.AddRay(r.dir, r.seg, r.wo, r.wl, r.e, true)
			}
		}
		// One observation's own estimate, before pooling.
		set.estimateAmbient([]brdf.Params{metal, ceiling})
		own = modelAt(ob, nobs/2, &metal)[1]
		osum += own
		osum2 += own * own
		ob.poolIndirect(poolHalfWidth)
		set.estimateAmbient([]brdf.Params{metal, ceiling})
		v := modelAt(ob, nobs/2, &metal)[1]
		ps += v
		ps2 += v * v
	}
	pm, om := ps/batches, osum/batches
	pv := (ps2/batches - pm*pm) * batches / (batches - 1)
	ov := (osum2/batches - om*om) * batches / (batches - 1)
	se := math.Sqrt(pv / batches)
	t.Logf("pooled %.5f ± %.5f, own rays %.5f, quadrature %.5f; variance ratio %.3f (1/9 = 0.111)", pm, se, om, ref, pv/ov)
	if math.Abs(pm-ref) > 4*se {
		t.Errorf("pooled estimate %.5f ± %.5f, quadrature %.5f (the other photo's rays leak in?)", pm, se, ref)
	}
	if r := pv / ov; r < 0.06 || r > 0.2 {
		t.Errorf("pooled variance %.3g is %.3f of one observation's, expected about 1/9", pv, r)
	}
}

// TestPoolIndirectFrames: pooling hands a neighbour's ray to an
// observation in the observation's own local frame. Two observations of
// one photo with normals 30 degrees apart each have one ray, given in
// world coordinates here; after pooling, each must hold both rays, as the
// same world directions seen from its own frame (render.NewFrame), with
// weight 1/2.
func TestPoolIndirectFrames(t *testing.T) {
	normals := []render.Vec3{render.V3(0, 0, 1), render.V3(0.5, 0, math.Sqrt(0.75))}
	rays := []render.Vec3{render.V3(0.6, 0, 0.8), render.V3(0, 0.28, 0.96)}
	ob := &Observations{}
	for i, n := range normals {
		f := render.NewFrame(n)
		ob.AddLight(brdf.Vec{Z: 1}, [3]float64{1, 1, 1})
		ob.Add(f.ToLocal(render.V3(0, 0, 1)), [3]float64{1, 1, 1}, 0)
		ob.AddRay(f.ToLocal(rays[i]), 1, brdf.Vec{Z: 1}, brdf.Vec{Z: 1}, [3]float64{1, 1, 1}, true)
		ob.nrm = append(ob.nrm, float32(n.X), float32(n.Y), float32(n.Z))
	}
	ob.poolIndirect(1)
	for i, n := range normals {
		f := render.NewFrame(n)
		s, e := ob.lights(i)
		var got []brdf.Vec
		for l := s; l < e; l++ {
			if ob.LightRay[l] < 0 {
				continue
			}
			if w := ob.lightWeight(l); math.Abs(w-0.5) > 1e-7 {
				t.Errorf("observation %d: weight %g, want 1/2", i, w)
			}
			got = append(got, brdf.Vec{X: float64(ob.WiX[l]), Y: float64(ob.WiY[l]), Z: float64(ob.WiZ[l])})
		}
		if len(got) != 2 {
			t.Fatalf("observation %d: %d indirect samples, want 2", i, len(got))
		}
		for j, r := range rays {
			want := f.ToLocal(r)
			if d := math.Abs(got[j].X-want.X) + math.Abs(got[j].Y-want.Y) + math.Abs(got[j].Z-want.Z); d > 1e-6 {
				t.Errorf("observation %d, ray %d: local %.6f, want %.6f", i, j, got[j], want)
			}
		}
	}
}
