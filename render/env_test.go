package render

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"patina/brdf"
)

// texelDirection is the documented mapping, written out again from the
// Environment documentation: the centre of texel (i, j) of a w x h map has
// theta = pi (j+0.5)/h from the up axis U and azimuth phi = 2 pi (i+0.5)/w
// + rotation from A towards B.
func texelDirection(i, j, w, h int, a, b, u Vec3, rotDeg float64) Vec3 {
	theta := math.Pi * (float64(j) + 0.5) / float64(h)
	phi := 2*math.Pi*(float64(i)+0.5)/float64(w) + rotDeg*math.Pi/180
	return a.Mul(math.Sin(theta) * math.Cos(phi)).Add(b.Mul(math.Sin(theta) * math.Sin(phi))).Add(u.Mul(math.Cos(theta)))
}

func oneTexelMap(w, h, i, j int, L float32) []float32 {
	pix := make([]float32, 3*w*h)
	k := 3 * (j*w + i)
	pix[k], pix[k+1], pix[k+2] = L, L, L
	return pix
}

// TestEnvironmentBrightTexelDirection places one bright texel and checks
// that it is seen exactly in the direction the documentation states, for
// +Z up and for +Y up with a rotation.
func TestEnvironmentBrightTexelDirection(t *testing.T) {
	const w, h, bi, bj = 64, 32, 10, 7
	cases := []struct {
		name    string
		up      Vec3
		rot     float64
		a, b, u Vec3
	}{
		{"z-up", Vec3{0, 0, 1}, 0, Vec3{1, 0, 0}, Vec3{0, 1, 0}, Vec3{0, 0, 1}},
		{"y-up rotated 90", Vec3{0, 1, 0}, 90, Vec3{1, 0, 0}, Vec3{0, 0, -1}, Vec3{0, 1, 0}},
		{"z-up rotated -30", Vec3{0, 0, 2}, -30, Vec3{1, 0, 0}, Vec3{0, 1, 0}, Vec3{0, 0, 1}},
	}
	for _, c := range cases {
		e, err := NewEnvironmentMap(w, h, oneTexelMap(w, h, bi, bj, 100), EnvironmentOrientation{Up: c.up, RotateDeg: c.rot})
		if err != nil {
			t.Fatal(err)
		}
		d := texelDirection(bi, bj, w, h, c.a, c.b, c.u, c.rot)
		if L := e.Radiance(d); L[0] != 100 {
			t.Fatalf("%s: radiance towards the documented direction %v = %v, want 100", c.name, d, L)
		}
		// Neighbouring texels' centres are dark.
		for _, n := range [][2]int{{bi + 1, bj}, {bi - 1, bj}, {bi, bj + 1}, {bi, bj - 1}} {
			if L := e.Radiance(texelDirection(n[0], n[1], w, h, c.a, c.b, c.u, c.rot)); L[0] != 0 {
				t.Fatalf("%s: neighbour %v is lit", c.name, n)
			}
		}
		// Every importance sample lands in the bright texel.
		for k := 0; k < 100; k++ {
			s, L, pdf := e.Sample(rand.Float64(), rand.Float64())
			if L[0] != 100 || pdf <= 0 || s.Dot(d) < math.Cos(2*math.Pi/w) {
				t.Fatalf("%s: sample %v radiance %v pdf %v is not in the bright texel", c.name, s, L, pdf)
			}
		}
	}
}

// randomMap is a test map with smooth variation, a dark band and a bright
// spot, so the density has every kind of feature.
func randomMap(w, h int, seed uint64) []float32 {
	r := rand.New(rand.NewPCG(seed, 1))
	pix := make([]float32, 3*w*h)
	for j := 0; j < h; j++ {
		for i := 0; i < w; i++ {
			k := 3 * (j*w + i)
			v := float32(0.2 + r.Float64())
			if j == h/3 {
				v = 0
			}
			if i == w/4 && j == h/5 {
				v = 500
			}
			pix[k], pix[k+1], pix[k+2] = v, v*0.5, v*0.25
		}
	}
	return pix
}

// fibonacciSphere returns n points equally spread over the unit sphere
// (the spherical Fibonacci lattice, equal-area in z and phi).
func fibonacciSphere(n int, f func(Vec3)) {
	ga := math.Pi * (3 - math.Sqrt(5))
	for i := 0; i < n; i++ {
		z := 1 - (2*float64(i)+1)/float64(n)
		r := math.Sqrt(1 - z*z)
		phi := ga * float64(i)
		f(Vec3{r * math.Cos(phi), r * math.Sin(phi), z})
	}
}

// TestEnvironmentPDFIntegratesToOne integrates PDF over the sphere with a
// quadrature independent of the map's grid (the Fibonacci lattice): the
// density must integrate to 1 (Physically Based Rendering, 3rd ed., 14.2.4,
// with the conversion pdf_omega = pdf_uv / (2 pi^2 sin theta)).
func TestEnvironmentPDFIntegratesToOne(t *testing.T) {
	for _, up := range []Vec3{{0, 0, 1}, {0, 1, 0}} {
		e, err := NewEnvironmentMap(48, 24, randomMap(48, 24, 3), EnvironmentOrientation{Up: up, RotateDeg: 17})
		if err != nil {
			t.Fatal(err)
		}
		const n = 1 << 20
		sum := 0.0
		fibonacciSphere(n, func(d Vec3) { sum += e.PDF(d) })
		integral := sum * 4 * math.Pi / n
		t.Logf("up %v: integral %.6f", up, integral)
		// The lattice's error on a piecewise-constant integrand with a
		// bright texel is about 1e-3 at this n (measured: 2e-4).
		if math.Abs(integral-1) > 2e-3 {
			t.Fatalf("up %v: integral of PDF = %v, want 1", up, integral)
		}
	}
	c, _ := NewConstantEnvironment(brdf.RGB{1, 1, 1}, EnvironmentOrientation{})
	if p := c.PDF(Vec3{0, 0, 1}); math.Abs(p*4*math.Pi-1) > 1e-15 {
		t.Fatalf("constant environment pdf %v", p)
	}
}

// TestEnvironmentSampleChiSquare compares the histogram of Sample with the
// integral of PDF over bins that do not align with texels (equal-area bins
// in z and phi about a tilted axis) by Pearson's chi-square test, in the
// manner of the sampling tests of Physically Based Rendering; the p-value is
// from gonum's chi-square distribution.
func TestEnvironmentSampleChiSquare(t *testing.T) {
	e, err := NewEnvironmentMap(32, 16, randomMap(32, 16, 5), EnvironmentOrientation{Up: Vec3{0.2, 0.1, 1}, RotateDeg: 40})
	if err != nil {
		t.Fatal(err)
	}
	const nz, nphi = 24, 48
	bin := func(d Vec3) int {
		z := clampF64(d.Z, -1, 1)
		phi := math.Atan2(d.Y, d.X) + math.Pi
		iz := min(int((z+1)/2*nz), nz-1)
		ip := min(int(phi/(2*math.Pi)*nphi), nphi-1)
		return iz*nphi + ip
	}
	// Expected probabilities: the PDF integrated over each bin with a
	// 48 x 48 midpoint rule in (z, phi) (fine enough that its error on the density's
	// edges stays well below the sampling noise), where d omega = dz dphi.
	expect := make([]float64, nz*nphi)
	const sub = 48
	for iz := 0; iz < nz; iz++ {
		for ip := 0; ip < nphi; ip++ {
			s := 0.0
			for a := 0; a < sub; a++ {
				z := -1 + 2*(float64(iz)+(float64(a)+0.5)/sub)/nz
				r := math.Sqrt(1 - z*z)
				for b := 0; b < sub; b++ {
					phi := 2*math.Pi*(float64(ip)+(float64(b)+0.5)/sub)/nphi - math.Pi
					s += e.PDF(Vec3{r * math.Cos(phi), r * math.Sin(phi), z})
				}
			}
			expect[iz*nphi+ip] = s / (sub * sub) * (2.0 / nz) * (2 * math.Pi / nphi)
		}
	}
	const n = 400000
	obs := make([]float64, nz*nphi)
	r := rand.New(rand.NewPCG(11, 12))
	for k := 0; k < n; k++ {
		d, _, pdf := e.Sample(r.Float64(), r.Float64())
		if pdf <= 0 {
			continue
		}
		if math.Abs(pdf-e.PDF(d)) > 1e-6*pdf {
			t.Fatalf("Sample pdf %v != PDF %v at %v", pdf, e.PDF(d), d)
		}
		obs[bin(d)]++
	}
	// Pool bins with small expected counts (common practice: >= 5).
	chi, dof := 0.0, -1
	var po, pe float64
	for i := range obs {
		po += obs[i]
		pe += expect[i] * n
		if pe >= 5 {
			chi += (po - pe) * (po - pe) / pe
			dof++
			po, pe = 0, 0
		}
	}
	if pe > 0 {
		chi += (po - pe) * (po - pe) / pe
		dof++
	}
	p := distuv.ChiSquared{K: float64(dof)}.Survival(chi)
	t.Logf("chi-square %.1f with %d degrees of freedom, p = %.3f", chi, dof, p)
	if p < 0.001 {
		t.Fatalf("chi-square %.1f with %d dof: p = %.2g, Sample does not follow PDF", chi, dof, p)
	}
}

// TestDistribution1DInvertsCDF checks the 1D piecewise-constant inversion
// on a worked example: f = (1, 3) has CDF 0, 1/4, 1, so u = 0.25 maps to
// x = 0.5 and u = 0.625 to x = 0.75, with densities 0.5 and 1.5.
func TestDistribution1DInvertsCDF(t *testing.T) {
	d := NewDistribution1D([]float64{1, 3})
	for _, c := range []struct{ u, x, pdf float64 }{{0, 0, 0.5}, {0.125, 0.25, 0.5}, {0.25, 0.5, 1.5}, {0.625, 0.75, 1.5}} {
		x, pdf, _ := d.Sample(c.u)
		if math.Abs(x-c.x) > 1e-15 || pdf != c.pdf || d.PDF(x) != pdf {
			t.Fatalf("Sample(%v) = %v, %v; want %v, %v", c.u, x, pdf, c.x, c.pdf)
		}
	}
	z := NewDistribution1D([]float64{0, 0, 0})
	if x, pdf, _ := z.Sample(0.5); pdf != 1 || x < 0 || x >= 1 {
		t.Fatal("all-zero distribution is not uniform")
	}
	g := NewDistribution1D([]float64{2, 0, 0, 2})
	for _, u := range []float64{0.4999, 0.5, 0.5001} {
		if _, pdf, b := g.Sample(u); pdf == 0 || b == 1 || b == 2 {
			t.Fatalf("Sample(%v) landed in an empty bin %d", u, b)
		}
	}
}

// TestEnvironmentRejectsBadInput checks the documented limits and value
// checks, before any allocation of tables.
func TestEnvironmentRejectsBadInput(t *testing.T) {
	if _, err := NewEnvironmentMap(0, 4, nil, EnvironmentOrientation{}); err == nil {
		t.Fatal("zero width accepted")
	}
	if _, err := NewEnvironmentMap(MaxEnvironmentSide, MaxEnvironmentSide, nil, EnvironmentOrientation{}); err == nil {
		t.Fatal("oversized map accepted")
	}
	if _, err := NewEnvironmentMap(4, 2, make([]float32, 5), EnvironmentOrientation{}); err == nil {
		t.Fatal("short pixel slice accepted")
	}
	if _, err := NewConstantEnvironment(brdf.RGB{math.NaN(), 0, 0}, EnvironmentOrientation{}); err == nil {
		t.Fatal("NaN radiance accepted")
	}
	if _, err := NewConstantEnvironment(brdf.RGB{1, 1, 1}, EnvironmentOrientation{Scale: -1}); err == nil {
		t.Fatal("negative scale accepted")
	}
}

// TestStudioSeenThroughCamera looks from the origin, through a pinhole
// camera, along the documented direction of the studio's key box (azimuth
// 35, elevation 35 from +X towards +Y with +Z up) and along the same
// direction with the map turned by -env-rotate 90 (azimuth 125): the centre
// pixel must show the box's radiance, and a view 90 degrees away must not.
func TestStudioSeenThroughCamera(t *testing.T) {
	w, h, pix, err := Studio{Width: 512}.Map()
	if err != nil {
		t.Fatal(err)
	}
	m := &Mesh{Positions: []float32{0, 0, -50, 1, 0, -50, 0, 1, -50}, Indices: []uint32{0, 1, 2}, Segments: []int32{0}}
	sc := mustScene(t, m)
	key := StudioBoxes[0]
	for _, rot := range []float64{0, 90} {
		env, err := NewEnvironmentMap(w, h, pix, EnvironmentOrientation{RotateDeg: rot})
		if err != nil {
			t.Fatal(err)
		}
		for _, off := range []float64{0, 90} {
			az, el := (key.AzimuthDeg+rot+off)*math.Pi/180, key.ElevationDeg*math.Pi/180
			d := Vec3{math.Cos(el) * math.Cos(az), math.Cos(el) * math.Sin(az), math.Sin(el)}
			cam := lookAt(Vec3{}, d, Vec3{0, 0, 1}, 9, 9, 2)
			f, err := Render(context.Background(), sc, cam, &Lights{Environment: env}, []brdf.Params{lambert(0.5, 0.5, 0.5)}, Settings{SPP: 4})
			if err != nil {
				t.Fatal(err)
			}
			L, _ := f.Pixel(4, 4)
			if lit := L[1] == float64(float32(key.Radiance[1])); lit != (off == 0) {
				t.Errorf("rotation %v, offset %v: centre pixel %v (box radiance %v)", rot, off, L, key.Radiance)
			}
		}
	}
}
