package capture

import (
	"bytes"
	"flag"
	"image"
	"image/color"
	"image/png"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"

	"golang.org/x/image/tiff"

	"patina/assets/mesh"
	"patina/render"
	"patina/render/colour"
)

// The small fixture capture testdata/jar-small is made by makeJarSmall:
// `go test ./assets/capture -run TestJarSmallFixture -write-fixture`
// rewrites it; without the flag the test regenerates it in a temporary
// directory and checks that the committed files still match.
var writeFixture = flag.Bool("write-fixture", false, "rewrite testdata/jar-small from the generator")

const fixtureDir = "../../testdata/jar-small"

// Ground truth of the fixture's materials (also in its README.md).
type fixtureMaterial struct {
	diffuse   [3]float64 // albedo
	f0        [3]float64 // specular reflectance at normal incidence
	roughness float64    // perceptual; alpha = roughness^2
}

var fixtureMaterials = []fixtureMaterial{
	{diffuse: [3]float64{0.55, 0.30, 0.18}, f0: [3]float64{0.04, 0.04, 0.04}, roughness: 0.35}, // glaze
	{diffuse: [3]float64{0, 0, 0}, f0: [3]float64{0.95, 0.77, 0.37}, roughness: 0.30},          // gilding
	{diffuse: [3]float64{0.18, 0.18, 0.18}, f0: [3]float64{0, 0, 0}, roughness: 1},             // grey card, Lambertian
}

// jarMesh builds the fixture mesh: a jar (surface of revolution, 32 sides)
// with a gilt band, beside a flat grey card. Labels: 0 glaze, 1 gilding,
// 2 grey card.
func jarMesh() *render.Mesh {
	profile := [][2]float64{ // (radius, height) in metres, bottom to top
		{0.045, 0}, {0.060, 0.012}, {0.070, 0.035}, {0.076, 0.065}, {0.075, 0.095},
		{0.068, 0.120}, {0.058, 0.140}, {0.046, 0.158}, {0.036, 0.172}, {0.034, 0.185}, {0.038, 0.195},
	}
	const sides = 32
	m := &render.Mesh{SegmentLabels: []render.SegmentLabel{{Label: 0, Name: "glaze"}, {Label: 1, Name: "gilding"}, {Label: 2, Name: "grey card"}}}
	add := func(x, y, z float64) uint32 {
		m.Positions = append(m.Positions, float32(x), float32(y), float32(z))
		return uint32(len(m.Positions)/3 - 1)
	}
	tri := func(a, b, c uint32, seg int32) {
		m.Indices = append(m.Indices, a, b, c)
		m.Segments = append(m.Segments, seg)
	}
	ring := make([][]uint32, len(profile))
	for i, p := range profile {
		for k := 0; k < sides; k++ {
			a := 2 * math.Pi * float64(k) / sides
			ring[i] = append(ring[i], add(p[0]*math.Cos(a), p[0]*math.Sin(a), p[1]))
		}
	}
	bottom := add(0, 0, 0)
	top := add(0, 0, profile[len(profile)-1][1]-0.01) // a shallow lid dips into the mouth
	for k := 0; k < sides; k++ {
		k1 := (k + 1) % sides
		tri(bottom, ring[0][k1], ring[0][k], 0) // facing down
		for i := 0; i+1 < len(profile); i++ {
			seg := int32(0)
			if i == 5 || i == 6 { // the shoulder between 0.120 and 0.158 m
				seg = 1
			}
			tri(ring[i][k], ring[i][k1], ring[i+1][k1], seg)
			tri(ring[i][k], ring[i+1][k1], ring[i+1][k], seg)
		}
		n := len(profile) - 1
		tri(ring[n][k], ring[n][k1], top, 0)
	}
	// Grey card on the ground in front of the jar, 2x2 quads, facing +z.
	const x0, y0, size = 0.085, -0.15, 0.08
	var g [3][3]uint32
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			g[i][j] = add(x0+size*float64(i)/2, y0+size*float64(j)/2, 0.0005)
		}
	}
	for i := 0; i < 2; i++ {
		for j := 0; j < 2; j++ {
			tri(g[i][j], g[i+1][j], g[i+1][j+1], 2)
			tri(g[i][j], g[i+1][j+1], g[i][j+1], 2)
		}
	}
	return m
}

// lookAt returns the camera-to-world rotation (columns x right, y down, z
// forward) of a level camera at pos looking at target, world up +z.
func lookAt(pos, target [3]float64) [3][3]float64 {
	z := norm3(sub3(target, pos))
	x := norm3(cross3(z, [3]float64{0, 0, 1}))
	y := cross3(z, x)
	var r [3][3]float64
	for i := 0; i < 3; i++ {
		r[i] = [3]float64{x[i], y[i], z[i]}
	}
	return r
}

func sub3(a, b [3]float64) [3]float64 { return [3]float64{a[0] - b[0], a[1] - b[1], a[2] - b[2]} }
func add3(a, b [3]float64) [3]float64 { return [3]float64{a[0] + b[0], a[1] + b[1], a[2] + b[2]} }
func scale3(a [3]float64, s float64) [3]float64 {
	return [3]float64{a[0] * s, a[1] * s, a[2] * s}
}
func dot3(a, b [3]float64) float64 { return a[0]*b[0] + a[1]*b[1] + a[2]*b[2] }
func cross3(a, b [3]float64) [3]float64 {
	return [3]float64{a[1]*b[2] - a[2]*b[1], a[2]*b[0] - a[0]*b[2], a[0]*b[1] - a[1]*b[0]}
}
func norm3(a [3]float64) [3]float64 { return scale3(a, 1/math.Sqrt(dot3(a, a))) }

// fixtureCapture is the capture description of the fixture.
func fixtureCapture() *Capture {
	target := [3]float64{0.03, -0.02, 0.08}
	north := [3]float64{0.02, -0.62, 0.22}
	east := [3]float64{0.52, -0.34, 0.30}
	l0, l1, l2 := 0, 1, 2
	grey := [3]float64{0.18, 0.18, 0.18}
	return &Capture{
		Version: 1, Name: "jar, small (synthetic fixture)", Up: "+z", Mesh: "mesh/jar.ply",
		Segments: []Segment{
			{Name: "glaze", Label: &l0, Model: ModelDielectric},
			{Name: "gilding", Label: &l1, Model: ModelMetal},
			{Name: "grey card", Label: &l2, Model: ModelDielectric, ReferenceAlbedo: &grey},
		},
		Cameras: []Camera{
			{ID: "north", Width: 64, Height: 48, Fx: 95, Fy: 95, Cx: 31.5, Cy: 23.5, Position: north, Rotation: lookAt(north, target)},
			{ID: "east", Width: 64, Height: 48, Fx: 90, Fy: 90.5, Cx: 32.0, Cy: 23.0, Distortion: [5]float64{-0.04, 0, 0, 0, 0}, Position: east, Rotation: lookAt(east, target)},
		},
		Lights: []Light{
			{ID: "key", Type: LightPoint, Position: [3]float64{0.35, -0.45, 0.45}, Intensity: [3]float64{0.9, 0.88, 0.82}},
			{ID: "fill", Type: LightPoint, Position: [3]float64{-0.45, -0.30, 0.30}, Intensity: [3]float64{0.5, 0.52, 0.58}},
			{ID: "sky", Type: LightDirectional, Direction: [3]float64{-0.3, -0.4, 0.87}, Irradiance: [3]float64{0.8, 0.8, 0.8}},
		},
		Photos: []Photo{
			{File: "photos/north-key.png", Camera: "north", Lights: []string{"key"}, Encoding: EncodingSRGB, WhiteLevel: 1, Exposure: Exposure{Scale: 1}, Use: UseFit, Mask: "masks/north.png"},
			{File: "photos/north-sky.png", Camera: "north", Lights: []string{"sky"}, Encoding: EncodingSRGB, WhiteLevel: 1, Exposure: Exposure{Scale: 1}, Use: UseFit},
			{File: "photos/east-key-fill.tif", Camera: "east", Lights: []string{"key", "fill"}, Encoding: EncodingLinear, BlackLevel: 0.004, WhiteLevel: 0.96, Exposure: Exposure{Scale: 2}, Use: UseFit},
			{File: "photos/east-fill-sky.png", Camera: "east", Lights: []string{"fill", "sky"}, Encoding: EncodingSRGB, WhiteLevel: 1, Exposure: Exposure{Scale: 1}, Use: UseHoldout},
		},
	}
}

// scene is the fixture's geometry for the tiny ray tracer below.
type scene struct {
	m       *render.Mesh
	p0, e1  [][3]float64 // per triangle: first vertex and the two edges
	e2      [][3]float64
	p       [][3]float64 // vertex positions
	n       [][3]float64 // angle-weighted vertex normals
	tris    [][3]uint32
	seg     []int32
	centre  [3]float64
	radius2 float64
	groups  []triGroup // runs of consecutive triangles with a bounding sphere
}

type triGroup struct {
	tris    []int
	centre  [3]float64
	radius2 float64
}

func newScene(m *render.Mesh) *scene {
	s := &scene{m: m}
	for i := 0; i < m.NumVertices(); i++ {
		x, y, z := m.Vertex(uint32(i))
		s.p = append(s.p, [3]float64{float64(x), float64(y), float64(z)})
	}
	s.n = make([][3]float64, len(s.p))
	for t := 0; t < m.NumTriangles(); t++ {
		tr := [3]uint32{m.Indices[3*t], m.Indices[3*t+1], m.Indices[3*t+2]}
		s.tris = append(s.tris, tr)
		s.seg = append(s.seg, m.Segments[t])
		fn := norm3(cross3(sub3(s.p[tr[1]], s.p[tr[0]]), sub3(s.p[tr[2]], s.p[tr[0]])))
		for c := 0; c < 3; c++ {
			e1 := norm3(sub3(s.p[tr[(c+1)%3]], s.p[tr[c]]))
			e2 := norm3(sub3(s.p[tr[(c+2)%3]], s.p[tr[c]]))
			ang := math.Acos(math.Max(-1, math.Min(1, dot3(e1, e2))))
			s.n[tr[c]] = add3(s.n[tr[c]], scale3(fn, ang))
		}
	}
	for i := range s.n {
		s.n[i] = norm3(s.n[i])
	}
	for _, tr := range s.tris {
		s.p0 = append(s.p0, s.p[tr[0]])
		s.e1 = append(s.e1, sub3(s.p[tr[1]], s.p[tr[0]]))
		s.e2 = append(s.e2, sub3(s.p[tr[2]], s.p[tr[0]]))
	}
	// Group triangles by the 3 cm cell of their centroid, each group with
	// a bounding sphere, so a ray tests few triangles.
	cells := map[[3]int][]int{}
	var keys [][3]int
	for i, tr := range s.tris {
		c := scale3(add3(add3(s.p[tr[0]], s.p[tr[1]]), s.p[tr[2]]), 1.0/3)
		k := [3]int{int(math.Floor(c[0] / 0.03)), int(math.Floor(c[1] / 0.03)), int(math.Floor(c[2] / 0.03))}
		if _, ok := cells[k]; !ok {
			keys = append(keys, k)
		}
		cells[k] = append(cells[k], i)
	}
	for _, k := range keys { // in order of first appearance: deterministic
		g := triGroup{tris: cells[k]}
		n := 0.0
		for _, i := range g.tris {
			for _, v := range s.tris[i] {
				g.centre = add3(g.centre, s.p[v])
				n++
			}
		}
		g.centre = scale3(g.centre, 1/n)
		for _, i := range g.tris {
			for _, v := range s.tris[i] {
				d := sub3(s.p[v], g.centre)
				g.radius2 = math.Max(g.radius2, dot3(d, d)*1.0001)
			}
		}
		s.groups = append(s.groups, g)
	}
	s.centre = [3]float64{0.05, -0.04, 0.1}
	for _, p := range s.p {
		d := sub3(p, s.centre)
		s.radius2 = math.Max(s.radius2, dot3(d, d))
	}
	return s
}

// intersect finds the nearest triangle hit (Moller-Trumbore) along o + t d
// with t in (tmin, tmax); it returns the triangle, t and barycentrics.
func (s *scene) intersect(o, d [3]float64, tmin, tmax float64) (int, float64, float64, float64) {
	missSphere := func(centre [3]float64, r2 float64) bool {
		oc := sub3(o, centre)
		b := dot3(oc, d)
		c := dot3(oc, oc) - r2
		return c > 0 && (b > 0 || b*b-c < 0)
	}
	if missSphere(s.centre, s.radius2) {
		return -1, 0, 0, 0
	}
	best, bt, bu, bv := -1, tmax, 0.0, 0.0
	for _, g := range s.groups {
		if missSphere(g.centre, g.radius2) {
			continue
		}
		for _, i := range g.tris {
			e1, e2 := s.e1[i], s.e2[i]
			pv := cross3(d, e2)
			det := dot3(e1, pv)
			if math.Abs(det) < 1e-14 {
				continue
			}
			inv := 1 / det
			tv := sub3(o, s.p0[i])
			u := dot3(tv, pv) * inv
			if u < 0 || u > 1 {
				continue
			}
			qv := cross3(tv, e1)
			v := dot3(d, qv) * inv
			if v < 0 || u+v > 1 {
				continue
			}
			t := dot3(e2, qv) * inv
			if t > tmin && t < bt {
				best, bt, bu, bv = i, t, u, v
			}
		}
	}
	return best, bt, bu, bv
}

// ggxBRDF evaluates the fixture's reflectance: albedo/pi plus the GGX
// microfacet specular lobe with height-correlated Smith masking and
// Schlick's Fresnel (Walter et al. 2007; Heitz 2014; Schlick 1994; alpha =
// roughness^2 as in glTF 2.0).
func ggxBRDF(mat fixtureMaterial, n, wi, wo [3]float64) [3]float64 {
	ni, no := dot3(n, wi), dot3(n, wo)
	if ni <= 0 || no <= 0 {
		return [3]float64{}
	}
	var f [3]float64
	for c := 0; c < 3; c++ {
		f[c] = mat.diffuse[c] / math.Pi
	}
	if mat.roughness >= 1 {
		return f // the grey card is Lambertian
	}
	h := norm3(add3(wi, wo))
	a2 := math.Pow(mat.roughness, 4)
	nh := dot3(n, h)
	den := nh*nh*(a2-1) + 1
	dist := a2 / (math.Pi * den * den)
	lambda := func(c float64) float64 {
		t2 := (1 - c*c) / (c * c)
		return (-1 + math.Sqrt(1+a2*t2)) / 2
	}
	g2 := 1 / (1 + lambda(ni) + lambda(no))
	vh := math.Max(0, dot3(wo, h))
	for c := 0; c < 3; c++ {
		fr := mat.f0[c] + (1-mat.f0[c])*math.Pow(1-vh, 5)
		f[c] += dist * g2 * fr / (4 * ni * no)
	}
	return f
}

// undistort inverts the Brown-Conrady model (OpenCV's order k1 k2 p1 p2
// k3) by fixed-point iteration, as cv::undistortPoints does.
func undistort(xd, yd float64, k [5]float64) (float64, float64) {
	x, y := xd, yd
	for it := 0; it < 30; it++ {
		r2 := x*x + y*y
		rad := 1 + k[0]*r2 + k[1]*r2*r2 + k[4]*r2*r2*r2
		dx := 2*k[2]*x*y + k[3]*(r2+2*x*x)
		dy := k[2]*(r2+2*y*y) + 2*k[3]*x*y
		x, y = (xd-dx)/rad, (yd-dy)/rad
	}
	return x, y
}

// renderPhoto renders photo ph of the fixture: linear radiance per pixel
// (3x3 samples) and the fraction of samples that hit the object.
func renderPhoto(s *scene, c *Capture, ph *Photo) ([]float64, []float64) {
	cam, _ := c.CameraByID(ph.Camera)
	w, h := cam.Width, cam.Height
	rad := make([]float64, 3*w*h)
	cover := make([]float64, w*h)
	const ss = 3
	const background = 0.015
	for py := 0; py < h; py++ {
		for px := 0; px < w; px++ {
			var sum [3]float64
			hits := 0
			for sy := 0; sy < ss; sy++ {
				for sx := 0; sx < ss; sx++ {
					u := float64(px) - 0.5 + (float64(sx)+0.5)/ss
					v := float64(py) - 0.5 + (float64(sy)+0.5)/ss
					x, y := undistort((u-cam.Cx)/cam.Fx, (v-cam.Cy)/cam.Fy, cam.Distortion)
					dc := [3]float64{x, y, 1}
					var d [3]float64
					for i := 0; i < 3; i++ {
						d[i] = cam.Rotation[i][0]*dc[0] + cam.Rotation[i][1]*dc[1] + cam.Rotation[i][2]*dc[2]
					}
					d = norm3(d)
					ti, t, bu, bv := s.intersect(cam.Position, d, 1e-6, math.Inf(1))
					if ti < 0 {
						for k := range sum {
							sum[k] += background
						}
						continue
					}
					hits++
					tr := s.tris[ti]
					p := add3(cam.Position, scale3(d, t))
					n := norm3(add3(add3(scale3(s.n[tr[0]], 1-bu-bv), scale3(s.n[tr[1]], bu)), scale3(s.n[tr[2]], bv)))
					wo := scale3(d, -1)
					if dot3(n, wo) <= 0 {
						n = scale3(n, -1) // seen from behind the shading normal
					}
					mat := fixtureMaterials[s.seg[ti]]
					for _, id := range ph.Lights {
						l, _ := c.LightByID(id)
						var wi, e [3]float64
						dist := math.Inf(1)
						switch l.Type {
						case LightPoint:
							toL := sub3(l.Position, p)
							dist = math.Sqrt(dot3(toL, toL))
							wi = scale3(toL, 1/dist)
							e = scale3(l.Intensity, 1/(dist*dist))
						case LightDirectional:
							wi = l.UnitDirection()
							e = l.Irradiance
						}
						cos := dot3(n, wi)
						if cos <= 0 {
							continue
						}
						if hit, _, _, _ := s.intersect(add3(p, scale3(n, 2e-3)), wi, 1e-6, dist); hit >= 0 {
							continue // shadowed (the 2 mm offset hides the facets' self-shadowing of a coarse mesh with smooth normals)
						}
						f := ggxBRDF(mat, n, wi, wo)
						for k := range sum {
							sum[k] += f[k] * e[k] * cos
						}
					}
				}
			}
			for k := range sum {
				rad[3*(py*w+px)+k] = sum[k] / (ss * ss)
			}
			cover[py*w+px] = float64(hits) / (ss * ss)
		}
	}
	return rad, cover
}

// encodePhoto turns radiance into the photo's code values (inverting its
// exposure, levels and encoding, with a little sensor noise) and encodes
// the file: 8-bit PNG, 16-bit PNG or 16-bit TIFF by name and photo index.
func encodePhoto(ph *Photo, idx int, rad []float64, w, h int, rng *rand.Rand) ([]byte, error) {
	bits16 := idx == 1 || filepath.Ext(ph.File) == ".tif"
	maxCode := 255.0
	if bits16 {
		maxCode = 65535
	}
	img8 := image.NewNRGBA(image.Rect(0, 0, w, h))
	img16 := image.NewRGBA64(image.Rect(0, 0, w, h))
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			var code [3]float64
			for k := 0; k < 3; k++ {
				l := rad[3*(y*w+x)+k] / ph.Exposure.Multiplier()
				l += 0.002 * rng.NormFloat64() * math.Sqrt(math.Max(l, 0.01)) // shot-like noise
				var u float64
				if ph.Encoding == EncodingSRGB {
					u = colour.LinearToSRGB(math.Max(0, l))
				} else {
					u = l
				}
				v := ph.BlackLevel + u*(ph.WhiteLevel-ph.BlackLevel)
				code[k] = math.Round(math.Max(0, math.Min(1, v)) * maxCode)
			}
			if bits16 {
				img16.SetRGBA64(x, y, color.RGBA64{uint16(code[0]), uint16(code[1]), uint16(code[2]), 0xffff})
			} else {
				img8.SetNRGBA(x, y, color.NRGBA{uint8(code[0]), uint8(code[1]), uint8(code[2]), 0xff})
			}
		}
	}
	var buf bytes.Buffer
	var im image.Image = img8
	if bits16 {
		im = img16
	}
	var err error
	if filepath.Ext(ph.File) == ".tif" {
		err = tiff.Encode(&buf, im, &tiff.Options{Compression: tiff.Deflate, Predictor: true})
	} else {
		err = png.Encode(&buf, im)
	}
	return buf.Bytes(), err
}

// makeJarSmall writes the whole fixture into dir.
func makeJarSmall(dir string) error {
	c := fixtureCapture()
	m := jarMesh()
	s := newScene(m)
	for _, sub := range []string{"mesh", "photos", "masks"} {
		if err := os.MkdirAll(filepath.Join(dir, sub), 0o755); err != nil {
			return err
		}
	}
	var mb bytes.Buffer
	if err := mesh.WritePLY(&mb, m, "ascii"); err != nil {
		return err
	}
	if err := os.WriteFile(filepath.Join(dir, "mesh", "jar.ply"), mb.Bytes(), 0o644); err != nil {
		return err
	}
	rng := rand.New(rand.NewPCG(2026, 12))
	for i := range c.Photos {
		ph := &c.Photos[i]
		cam, _ := c.CameraByID(ph.Camera)
		rad, cover := renderPhoto(s, c, ph)
		data, err := encodePhoto(ph, i, rad, cam.Width, cam.Height, rng)
		if err != nil {
			return err
		}
		if err := os.WriteFile(filepath.Join(dir, filepath.FromSlash(ph.File)), data, 0o644); err != nil {
			return err
		}
		if ph.Mask != "" {
			mask := image.NewGray(image.Rect(0, 0, cam.Width, cam.Height))
			for j, f := range cover {
				if f >= 0.5 {
					mask.Pix[j] = 255
				}
			}
			var buf bytes.Buffer
			if err := png.Encode(&buf, mask); err != nil {
				return err
			}
			if err := os.WriteFile(filepath.Join(dir, filepath.FromSlash(ph.Mask)), buf.Bytes(), 0o644); err != nil {
				return err
			}
		}
	}
	abs, err := filepath.Abs(dir)
	if err != nil {
		return err
	}
	c.Dir = abs
	return c.Save(filepath.Join(dir, "capture.json"))
}
