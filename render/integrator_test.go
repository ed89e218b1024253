package render

import (
	"context"
	"errors"
	"fmt"
	"math"
	"testing"

	"patina/brdf"
)

// octaSphere is a closed sphere made by subdividing an octahedron sub
// times and projecting the vertices onto the sphere: flat-shaded (no
// normals), 8*4^sub triangles, wound outwards (inwards when inward is
// true). Shared edges get bit-identical vertices (each midpoint is computed
// from the same two endpoints), so the watertight intersector sees no
// cracks.
func octaSphere(sub int, c Vec3, r float64, inward bool) *Mesh {
	type tri [3]Vec3
	px, nx, py, ny, pz, nz := Vec3{1, 0, 0}, Vec3{-1, 0, 0}, Vec3{0, 1, 0}, Vec3{0, -1, 0}, Vec3{0, 0, 1}, Vec3{0, 0, -1}
	ts := []tri{{px, py, pz}, {py, nx, pz}, {nx, ny, pz}, {ny, px, pz}, {py, px, nz}, {nx, py, nz}, {ny, nx, nz}, {px, ny, nz}}
	mid := func(a, b Vec3) Vec3 { return a.Add(b).Mul(0.5).Norm() }
	for s := 0; s < sub; s++ {
		var next []tri
		for _, t := range ts {
			a, b, cc := mid(t[0], t[1]), mid(t[1], t[2]), mid(t[2], t[0])
			next = append(next, tri{t[0], a, cc}, tri{a, t[1], b}, tri{cc, b, t[2]}, tri{a, b, cc})
		}
		ts = next
	}
	m := &Mesh{SegmentLabels: []SegmentLabel{{Label: 0}}}
	for _, t := range ts {
		if inward {
			t[1], t[2] = t[2], t[1]
		}
		for _, v := range t {
			p := c.Add(v.Mul(r))
			m.Positions = append(m.Positions, float32(p.X), float32(p.Y), float32(p.Z))
			m.Indices = append(m.Indices, uint32(len(m.Indices)))
		}
		m.Segments = append(m.Segments, 0)
	}
	return m
}

// appendQuad adds the square [-s, s]^2 in the plane z = z0, facing +z, as
// segment seg.
func appendQuad(m *Mesh, s, z0 float64, seg int32) {
	base := uint32(m.NumVertices())
	for _, p := range [][2]float64{{-s, -s}, {s, -s}, {s, s}, {-s, s}} {
		m.Positions = append(m.Positions, float32(p[0]), float32(p[1]), float32(z0))
	}
	m.Indices = append(m.Indices, base, base+1, base+2, base, base+2, base+3)
	m.Segments = append(m.Segments, seg, seg)
	for len(m.SegmentLabels) <= int(seg) {
		m.SegmentLabels = append(m.SegmentLabels, SegmentLabel{Label: len(m.SegmentLabels)})
	}
}

// lookAt builds an undistorted pinhole camera at pos looking at target.
func lookAt(pos, target, up Vec3, w, h int, vfovDeg float64) Pinhole {
	fwd := target.Sub(pos).Norm()
	right := fwd.Cross(up).Norm()
	down := fwd.Cross(right)
	f := float64(h) / 2 / math.Tan(vfovDeg*math.Pi/360)
	return Pinhole{Width: w, Height: h, Fx: f, Fy: f, Cx: float64(w-1) / 2, Cy: float64(h-1) / 2, Position: pos,
		Rotation: [3][3]float64{{right.X, down.X, fwd.X}, {right.Y, down.Y, fwd.Y}, {right.Z, down.Z, fwd.Z}}}
}

func mustScene(t testing.TB, m *Mesh) *Scene {
	t.Helper()
	sc, err := NewScene(m, 2)
	if err != nil {
		t.Fatal(err)
	}
	return sc
}

func constEnv(t testing.TB, L float64) *Environment {
	e, err := NewConstantEnvironment(brdf.RGB{L, L, L}, EnvironmentOrientation{})
	if err != nil {
		t.Fatal(err)
	}
	return e
}

func lambert(r, g, b float64) brdf.Params {
	return brdf.Params{Kind: brdf.Free, Diffuse: brdf.RGB{r, g, b}, Roughness: 1}
}

// within reports whether got is within k standard errors (sqrt(v)) of
// want, with a floor for values that have no noise at all.
func within(got, want, v, k float64) bool {
	return math.Abs(got-want) <= k*math.Sqrt(v)+1e-9*math.Max(1, math.Abs(want))
}

// coveredMean is the mean and its variance over the pixels fully covered
// by the object (alpha 1 with a transparent background).
func coveredMean(f *Film) (mean, variance brdf.RGB, n int) {
	for y := 0; y < f.Height; y++ {
		for x := 0; x < f.Width; x++ {
			L, a := f.Pixel(x, y)
			if a != 1 {
				continue
			}
			v := f.Variance(x, y)
			for c := 0; c < 3; c++ {
				mean[c] += L[c]
				variance[c] += v[c]
			}
			n++
		}
	}
	for c := 0; c < 3; c++ {
		mean[c] /= float64(n)
		variance[c] /= float64(n * n)
	}
	return
}

// TestWhiteFurnaceLambertian: a convex Lambertian object of albedo rho
// under uniform radiance 1 reflects exactly rho (the furnace check of
// REFERENCES.md; e.g. Smits and Jensen's global illumination test scenes).
// Each strategy is checked with a 4-sigma confidence bound from the film's
// variance estimate; BRDF sampling of a Lambertian surface has zero
// variance here, so it must be exact.
func TestWhiteFurnaceLambertian(t *testing.T) {
	sc := mustScene(t, octaSphere(3, Vec3{}, 1, false))
	cam := lookAt(Vec3{0, -4, 0.5}, Vec3{}, Vec3{0, 0, 1}, 32, 32, 35)
	rho := brdf.RGB{0.6, 0.4, 0.8}
	mats := []brdf.Params{lambert(rho[0], rho[1], rho[2])}
	for _, st := range []Strategy{MIS, LightOnly, BRDFOnly} {
		f, err := Render(context.Background(), sc, cam, &Lights{Environment: constEnv(t, 1)}, mats,
			Settings{SPP: 16, Strategy: st, TransparentBackground: true, lambertian: true, Seed: 3})
		if err != nil {
			t.Fatal(err)
		}
		m, v, n := coveredMean(f)
		if n < 300 {
			t.Fatalf("only %d covered pixels", n)
		}
		for c := 0; c < 3; c++ {
			k := 4.0
			if st == BRDFOnly {
				k, v[c] = 0, 0
			}
			if !within(m[c], rho[c], v[c], k) {
				t.Errorf("%v: channel %d mean %.6f, want %.6f (standard error %.2g)", st, c, m[c], rho[c], math.Sqrt(v[c]))
			}
		}
	}
}

// directionalAlbedo integrates brdf.Eval(p, wo, wi) cos(theta_i) over the
// hemisphere by the midpoint rule in (cos theta_i, phi): an independent
// quadrature of the model the integrator samples.
func directionalAlbedo(p *brdf.Params, wo brdf.Vec) brdf.RGB {
	const nmu, nphi = 1000, 1000
	var cs, sn [nphi]float64
	for j := range cs {
		sn[j], cs[j] = math.Sincos(2 * math.Pi * (float64(j) + 0.5) / nphi)
	}
	var a brdf.RGB
	for i := 0; i < nmu; i++ {
		mu := (float64(i) + 0.5) / nmu
		s := math.Sqrt(1 - mu*mu)
		for j := 0; j < nphi; j++ {
			f := brdf.Eval(p, wo, brdf.Vec{X: s * cs[j], Y: s * sn[j], Z: mu})
			for c := 0; c < 3; c++ {
				a[c] += f[c] * mu
			}
		}
	}
	for c := 0; c < 3; c++ {
		a[c] *= (1.0 / nmu) * (2 * math.Pi / nphi)
	}
	return a
}

// TestWhiteFurnaceMicrofacet: under uniform radiance 1, a convex object of
// any material reflects its directional albedo, which energy conservation
// keeps at most 1 (furnace check, REFERENCES.md). A plane seen at 50
// degrees is compared with the quadrature of the model, and a sphere must
// stay at or below 1 within the confidence bound in every pixel.
func TestWhiteFurnaceMicrofacet(t *testing.T) {
	mats := []brdf.Params{
		{Kind: brdf.Dielectric, Diffuse: brdf.RGB{0.9, 0.5, 0.2}, Specular: brdf.RGB{0.04, 0.04, 0.04}, Roughness: 0.5},
		{Kind: brdf.Metal, Specular: brdf.RGB{1, 1, 1}, Roughness: 0.6},
		{Kind: brdf.Free, Diffuse: brdf.RGB{1, 1, 1}, Specular: brdf.RGB{0.3, 0.2, 0.1}, Roughness: 0.8},
	}
	env := &Lights{Environment: constEnv(t, 1)}
	theta := 50 * math.Pi / 180
	m := &Mesh{}
	appendQuad(m, 1, 0, 0)
	plane := mustScene(t, m)
	dir := Vec3{0, -math.Sin(theta), math.Cos(theta)}
	cam := lookAt(dir.Mul(100), Vec3{}, Vec3{0, 0, 1}, 16, 16, 0.3)
	sphere := mustScene(t, octaSphere(3, Vec3{}, 1, false))
	scam := lookAt(Vec3{0, -4, 1}, Vec3{}, Vec3{0, 0, 1}, 24, 24, 35)
	for i := range mats {
		p := mats[i : i+1]
		want := directionalAlbedo(&p[0], brdf.Vec{X: 0, Y: math.Sin(theta), Z: math.Cos(theta)})
		f, err := Render(context.Background(), plane, cam, env, p, Settings{SPP: 32, TransparentBackground: true, Seed: 5})
		if err != nil {
			t.Fatal(err)
		}
		got, v, n := coveredMean(f)
		if n != 256 {
			t.Fatalf("plane covers %d pixels, want all 256", n)
		}
		for c := 0; c < 3; c++ {
			if !within(got[c], want[c], v[c], 4) || want[c] > 1 {
				t.Errorf("material %d channel %d: rendered %.5f, quadrature %.5f (standard error %.2g)", i, c, got[c], want[c], math.Sqrt(v[c]))
			}
		}
		f, err = Render(context.Background(), sphere, scam, env, p, Settings{SPP: 16, TransparentBackground: true, Seed: 6})
		if err != nil {
			t.Fatal(err)
		}
		for y := 0; y < f.Height; y++ {
			for x := 0; x < f.Width; x++ {
				L, a := f.Pixel(x, y)
				v := f.Variance(x, y)
				for c := 0; c < 3; c++ {
					if a == 1 && L[c] > 1+5*math.Sqrt(v[c])+1e-9 {
						t.Fatalf("material %d: pixel (%d,%d) channel %d = %.5f > 1 (standard error %.2g)", i, x, y, c, L[c], math.Sqrt(v[c]))
					}
				}
			}
		}
	}
}

// planeHit intersects a camera ray with the plane z = 0.
func planeHit(r Ray) (Vec3, bool) {
	if r.D.Z >= 0 {
		return Vec3{}, false
	}
	return r.At(-r.O.Z / r.D.Z), true
}

// TestPointLightOnLambertianPlane: a Lambertian plane of albedo rho under
// an isotropic point light of intensity I at distance r and incidence
// theta has radiance rho/pi I cos(theta) / r^2 (REFERENCES.md, analytic
// checks). The expectation per pixel averages that formula over a 16 x 16
// grid inside the pixel (the box filter); direct and full modes must both
// match, since nothing else is visible.
func TestPointLightOnLambertianPlane(t *testing.T) {
	m := &Mesh{}
	appendQuad(m, 20, 0, 0)
	sc := mustScene(t, m)
	cam := lookAt(Vec3{0.2, -1.5, 2}, Vec3{0, 0, 0}, Vec3{0, 0, 1}, 40, 30, 50)
	light := Light{Kind: PointLight, Position: Vec3{0.3, -0.2, 0.8}, Intensity: brdf.RGB{3, 2, 1}}
	rho := 0.5
	mats := []brdf.Params{lambert(rho, rho, rho)}
	expect := func(x, y int) brdf.RGB {
		var e brdf.RGB
		const n = 16
		for a := 0; a < n; a++ {
			for b := 0; b < n; b++ {
				r, _ := cam.Ray(float64(x)-0.5+(float64(b)+0.5)/n, float64(y)-0.5+(float64(a)+0.5)/n)
				p, ok := planeHit(r)
				if !ok {
					continue
				}
				d := light.Position.Sub(p)
				r2 := d.Len2()
				cos := d.Z / math.Sqrt(r2)
				for c := 0; c < 3; c++ {
					e[c] += rho / math.Pi * light.Intensity[c] * cos / r2
				}
			}
		}
		for c := 0; c < 3; c++ {
			e[c] /= n * n
		}
		return e
	}
	for _, direct := range []bool{true, false} {
		f, err := Render(context.Background(), sc, cam, &Lights{Lights: []Light{light}}, mats,
			Settings{SPP: 32, Direct: direct, lambertian: true, Seed: 8})
		if err != nil {
			t.Fatal(err)
		}
		checked := 0
		for _, px := range [][2]int{{0, 0}, {39, 0}, {20, 15}, {5, 25}, {33, 29}, {12, 8}, {27, 19}} {
			L, _ := f.Pixel(px[0], px[1])
			v := f.Variance(px[0], px[1])
			e := expect(px[0], px[1])
			for c := 0; c < 3; c++ {
				if !within(L[c], e[c], v[c], 4) {
					t.Errorf("direct=%v pixel %v channel %d: %.6f, want %.6f (standard error %.2g)", direct, px, c, L[c], e[c], math.Sqrt(v[c]))
				}
			}
			checked++
		}
		if checked != 7 {
			t.Fatal("pixels skipped")
		}
	}
}

// TestClosedSphereFurnace: inside a closed sphere whose Lambertian surface
// of albedo rho emits Le, the radiance is Le / (1 - rho) everywhere, the
// sum of the interreflection series (REFERENCES.md, analytic checks). It
// exercises Russian roulette, which must keep the estimate unbiased.
func TestClosedSphereFurnace(t *testing.T) {
	sc := mustScene(t, octaSphere(3, Vec3{}, 1, true))
	cam := lookAt(Vec3{0.1, 0, 0.05}, Vec3{1, 0.2, 0.1}, Vec3{0, 0, 1}, 16, 16, 90)
	rho := brdf.RGB{0.5, 0.3, 0.7}
	Le := 0.5
	f, err := Render(context.Background(), sc, cam, nil, []brdf.Params{lambert(rho[0], rho[1], rho[2])},
		Settings{SPP: 64, MaxDepth: 10000, lambertian: true, Emission: []brdf.RGB{{Le, Le, Le}}, Seed: 9})
	if err != nil {
		t.Fatal(err)
	}
	m, v := f.MeanVariance(0, 0, f.Width, f.Height)
	for c := 0; c < 3; c++ {
		want := Le / (1 - rho[c])
		if !within(m[c], want, v[c], 4) {
			t.Errorf("channel %d: %.5f, want %.5f (standard error %.2g)", c, m[c], want, math.Sqrt(v[c]))
		}
	}
}

// TestSingleTexelEnvironmentIrradiance: a map that is black except one
// texel of radiance Lt lights a horizontal Lambertian plane with irradiance
// E = Lt * integral of cos(theta) over the texel = Lt dphi (sin^2 theta1 -
// sin^2 theta0) / 2, so the plane's radiance is rho E / pi (definition of
// irradiance; REFERENCES.md).
func TestSingleTexelEnvironmentIrradiance(t *testing.T) {
	const w, h, ti, tj, Lt = 32, 16, 5, 3, 50.0
	env, err := NewEnvironmentMap(w, h, oneTexelMap(w, h, ti, tj, Lt), EnvironmentOrientation{})
	if err != nil {
		t.Fatal(err)
	}
	m := &Mesh{}
	appendQuad(m, 50, 0, 0)
	sc := mustScene(t, m)
	cam := lookAt(Vec3{0, 0, 2}, Vec3{0, 0.01, 0}, Vec3{0, 1, 0}, 16, 16, 40)
	rho := 0.5
	t0, t1 := math.Pi*tj/h, math.Pi*(tj+1)/h
	E := Lt * (2 * math.Pi / w) * (math.Sin(t1)*math.Sin(t1) - math.Sin(t0)*math.Sin(t0)) / 2
	want := rho * E / math.Pi
	for _, st := range []Strategy{MIS, LightOnly} {
		f, err := Render(context.Background(), sc, cam, &Lights{Environment: env}, []brdf.Params{lambert(rho, rho, rho)},
			Settings{SPP: 64, Strategy: st, lambertian: true, Seed: 10})
		if err != nil {
			t.Fatal(err)
		}
		mean, v := f.MeanVariance(0, 0, f.Width, f.Height)
		if !within(mean[1], want, v[1], 4) {
			t.Errorf("%v: plane radiance %.6f, want %.6f (standard error %.2g)", st, mean[1], want, math.Sqrt(v[1]))
		}
	}
}

// glossyScene is a glossy sphere on a rough metal floor under a map with a
// bright spot: the case where BRDF and light sampling each fail somewhere.
func glossyScene(t testing.TB) (*Scene, Camera, *Lights, []brdf.Params) {
	m := octaSphere(3, Vec3{0, 0, 0.5}, 0.5, false)
	appendQuad(m, 3, 0, 1)
	env, err := NewEnvironmentMap(64, 32, randomMap(64, 32, 7), EnvironmentOrientation{RotateDeg: 20})
	if err != nil {
		t.Fatal(err)
	}
	mats := []brdf.Params{
		{Kind: brdf.Dielectric, Diffuse: brdf.RGB{0.2, 0.4, 0.6}, Specular: brdf.RGB{0.04, 0.04, 0.04}, Roughness: 0.3},
		{Kind: brdf.Metal, Specular: brdf.RGB{0.9, 0.8, 0.6}, Roughness: 0.45},
	}
	return mustScene(t, m), lookAt(Vec3{0, -3, 1.5}, Vec3{0, 0, 0.4}, Vec3{0, 0, 1}, 24, 18, 40), &Lights{Environment: env}, mats
}

// TestStrategiesAgree: BRDF sampling only, light sampling only and their
// combination by MIS are unbiased estimators of the same image (Veach
// 1997, ch. 9), so their block means must agree within the combined
// standard error.
func TestStrategiesAgree(t *testing.T) {
	sc, cam, lights, mats := glossyScene(t)
	films := map[Strategy]*Film{}
	for _, st := range []Strategy{MIS, BRDFOnly, LightOnly} {
		f, err := Render(context.Background(), sc, cam, lights, mats, Settings{SPP: 64, Strategy: st, MaxDepth: 3, Seed: 12})
		if err != nil {
			t.Fatal(err)
		}
		films[st] = f
	}
	for by := 0; by < 18; by += 6 {
		for bx := 0; bx < 24; bx += 6 {
			mm, vm := films[MIS].MeanVariance(bx, by, bx+6, by+6)
			for _, st := range []Strategy{BRDFOnly, LightOnly} {
				m, v := films[st].MeanVariance(bx, by, bx+6, by+6)
				for c := 0; c < 3; c++ {
					if !within(m[c], mm[c], v[c]+vm[c], 4.5) {
						t.Errorf("block (%d,%d) channel %d: %v %.5f vs mis %.5f (standard error %.2g)", bx, by, c, st, m[c], mm[c], math.Sqrt(v[c]+vm[c]))
					}
				}
			}
		}
	}
}

// TestRenderDeterministicAcrossThreads renders the same scene on one and
// on two workers with small tiles and demands identical bytes.
func TestRenderDeterministicAcrossThreads(t *testing.T) {
	sc, cam, lights, mats := glossyScene(t)
	l := *lights
	l.Lights = []Light{{Kind: SphereLight, Position: Vec3{1, -1, 2}, Radius: 0.2, Intensity: brdf.RGB{2, 2, 2}},
		{Kind: DirectionalLight, Direction: Vec3{-1, 0.5, 1}, Irradiance: brdf.RGB{0.5, 0.5, 0.4}}}
	var out [2][]float32
	for i, th := range []int{1, 2} {
		f, err := Render(context.Background(), sc, cam, &l, mats, Settings{SPP: 6, Threads: th, TileSize: 5, Seed: 99})
		if err != nil {
			t.Fatal(err)
		}
		out[i] = append(f.RGB(), f.Alpha()...)
	}
	for i := range out[0] {
		if math.Float32bits(out[0][i]) != math.Float32bits(out[1][i]) {
			t.Fatalf("value %d differs: %v on 1 thread, %v on 2", i, out[0][i], out[1][i])
		}
	}
}

// TestRenderPassesAndCancel checks the progressive pass sequence and that
// a cancel stops the render promptly with the context's error.
func TestRenderPassesAndCancel(t *testing.T) {
	sc, cam, lights, mats := glossyScene(t)
	var spps []int
	_, err := Render(context.Background(), sc, cam, lights, mats, Settings{SPP: 10, OnPass: func(p Pass) {
		spps = append(spps, p.SPP)
		if p.Film.SPP != p.SPP {
			t.Errorf("pass film SPP %d != %d", p.Film.SPP, p.SPP)
		}
	}})
	if err != nil {
		t.Fatal(err)
	}
	if want := []int{1, 2, 4, 8, 10}; len(spps) != len(want) || spps[4] != 10 || spps[2] != 4 {
		t.Fatalf("passes %v, want %v", spps, want)
	}
	ctx, cancel := context.WithCancel(context.Background())
	tiles := 0
	_, err = Render(ctx, sc, cam, lights, mats, Settings{SPP: 1 << 20, Threads: 1, TileSize: 4, OnProgress: func(done, total int64) {
		tiles++
		cancel()
	}})
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("err = %v, want context.Canceled", err)
	}
	if tiles > 2 {
		t.Fatalf("%d tiles finished after the cancel", tiles)
	}
	if _, err := Render(context.Background(), sc, cam, lights, mats[:1], Settings{}); err == nil {
		t.Fatal("too few materials accepted")
	}
}

// TestSkyLightsHorizontalPlane: a horizontal Lambertian plane under the
// generated sky (sun included) has radiance rho E / pi, E the map's
// horizontal irradiance found by direct quadrature of the map
// (mapIrradiance), whatever the strategy.
func TestSkyLightsHorizontalPlane(t *testing.T) {
	w, h, pix, err := Sky{ElevationDeg: 35, AzimuthDeg: 60, Width: 256}.Map()
	if err != nil {
		t.Fatal(err)
	}
	env, err := NewEnvironmentMap(w, h, pix, EnvironmentOrientation{})
	if err != nil {
		t.Fatal(err)
	}
	E := mapIrradiance(w, h, pix, [3]float64{0, 0, 1}, nil)
	m := &Mesh{}
	appendQuad(m, 0.04, 0.0005, 0)
	sc := mustScene(t, m)
	cam := lookAt(Vec3{0.1, -0.1, 0.1}, Vec3{0, 0, 0}, Vec3{0, 0, 1}, 16, 16, 10)
	rho := 0.5
	for _, st := range []Strategy{MIS, LightOnly} {
		f, err := Render(context.Background(), sc, cam, &Lights{Environment: env}, []brdf.Params{lambert(rho, rho, rho)},
			Settings{SPP: 64, Strategy: st, lambertian: true, TransparentBackground: true, Seed: 13})
		if err != nil {
			t.Fatal(err)
		}
		mean, v, n := coveredMean(f)
		if n < 200 {
			t.Fatalf("plane covers only %d pixels", n)
		}
		for c := 0; c < 3; c++ {
			want := rho * E[c] / math.Pi
			if !within(mean[c], want, v[c], 4) {
				t.Errorf("%v channel %d: %.5f, want %.5f (standard error %.2g)", st, c, mean[c], want, math.Sqrt(v[c]))
			}
		}
	}
}

// ExampleRender renders the view of a calibrated camera with direct light
// only (the fit's forward model) and reads back a pixel and its variance.
func ExampleRender() {
	m := &Mesh{}
	appendQuad(m, 1, 0, 0) // a 2 m square in z = 0, segment 0
	sc, err := NewScene(m, 0)
	if err != nil {
		panic(err)
	}
	cam := lookAt(Vec3{0, -1, 1}, Vec3{}, Vec3{0, 0, 1}, 64, 48, 50)
	lights := &Lights{Lights: []Light{{Kind: PointLight, Position: Vec3{0.2, 0, 0.6}, Intensity: brdf.RGB{1, 1, 1}}}}
	mats := []brdf.Params{{Kind: brdf.Dielectric, Diffuse: brdf.RGB{0.5, 0.4, 0.3}, Specular: brdf.RGB{0.04, 0.04, 0.04}, Roughness: 0.4}}
	film, err := Render(context.Background(), sc, cam, lights, mats, Settings{SPP: 16, Direct: true, Seed: 1})
	if err != nil {
		panic(err)
	}
	L, alpha := film.Pixel(32, 24)
	v := film.Variance(32, 24)
	fmt.Printf("radiance %.3f, alpha %.0f, standard error %.1g\n", L, alpha, math.Sqrt(v[0]))
}
