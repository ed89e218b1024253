package fit

import (
	"math"
	"math/rand/v2"

	"patina/brdf"
)

// This file renders observations for the tests from the published model,
// written out here independently of package brdf's code and of Patina's
// renderer. The specular lobe is the glTF 2.0 specification's, Appendix B
// (Khronos), "BRDF implementation":
//
//	specular_brdf = F * V * D,   F = f0 + (1 - f0) (1 - |V.H|)^5   (Schlick 1994)
//	D = alpha^2 / (pi ((N.H)^2 (alpha^2 - 1) + 1)^2)               (Walter et al. 2007)
//	alpha = roughness^2
//	metal_brdf = specular_brdf
//
// with the height-correlated Smith visibility (Heitz 2014) in the closed
// form glTF's reference viewer uses:
//
//	V = 0.5 / (N.L sqrt((N.V)^2 (1 - alpha^2) + alpha^2) + N.V sqrt((N.L)^2 (1 - alpha^2) + alpha^2))
//
// which equals G2 / (4 |N.L| |N.V|) with G2 = 1 / (1 + Lambda(V) + Lambda(L)).
// glTF's dielectric weights its diffuse lobe by (1 - F(V.H)); Patina's model
// uses instead the energy-conserving weighting its package documentation
// states, a product of Schlick terms at the two normal cosines,
//
//	diffuse = color/pi (1 - f0)^2 (1 - (1 - N.V)^5) (1 - (1 - N.L)^5),
//
// so that weighting is what is written here (from the brdf package
// documentation, not its code). The free model has one f0 per channel.
// Geometry is exact: rays meet an analytic sphere or plane, normals are
// analytic.

type v3 struct{ x, y, z float64 }

func (a v3) add(b v3) v3      { return v3{a.x + b.x, a.y + b.y, a.z + b.z} }
func (a v3) sub(b v3) v3      { return v3{a.x - b.x, a.y - b.y, a.z - b.z} }
func (a v3) mul(s float64) v3 { return v3{a.x * s, a.y * s, a.z * s} }
func (a v3) dot(b v3) float64 { return a.x*b.x + a.y*b.y + a.z*b.z }
func (a v3) norm() v3         { return a.mul(1 / math.Sqrt(a.dot(a))) }
func (a v3) cross(b v3) v3    { return v3{a.y*b.z - a.z*b.y, a.z*b.x - a.x*b.z, a.x*b.y - a.y*b.x} }
func (a v3) local(t, b, n v3) brdf.Vec {
	return brdf.Vec{X: a.dot(t), Y: a.dot(b), Z: a.dot(n)}
}

// gltfBRDF is the Appendix B specular lobe plus the documented diffuse lobe
// (no cosine), per channel.
func gltfBRDF(kind brdf.Kind, diffuse, f0 [3]float64, rough float64, n, v, l v3) [3]float64 {
	nl, nv := n.dot(l), n.dot(v)
	if nl <= 0 || nv <= 0 {
		return [3]float64{}
	}
	h := v.add(l).norm()
	nh, vh := n.dot(h), math.Abs(v.dot(h))
	a := rough * rough
	a2 := a * a
	dd := nh*nh*(a2-1) + 1
	D := a2 / (math.Pi * dd * dd)
	V := 0.5 / (nl*math.Sqrt(nv*nv*(1-a2)+a2) + nv*math.Sqrt(nl*nl*(1-a2)+a2))
	var out [3]float64
	for c := 0; c < 3; c++ {
		F := f0[c] + (1-f0[c])*math.Pow(1-vh, 5)
		spec := F * V * D
		if kind == brdf.Metal {
			out[c] = spec
		} else {
			w := (1 - f0[c]) * (1 - f0[c]) * (1 - math.Pow(1-nv, 5)) * (1 - math.Pow(1-nl, 5))
			out[c] = w*diffuse[c]/math.Pi + spec
		}
	}
	return out
}

type testLight struct {
	point bool
	pos   v3         // position (point) or unit direction towards the light (directional)
	power [3]float64 // intensity W/sr (point) or irradiance W/m^2 (directional)
}

type testScene struct {
	sphere bool // unit sphere at the origin; else the plane z = 0, |x|,|y| <= 1
	cam    v3   // pinhole centre, looking at the origin
	fov    float64
	res    int
	photos [][]testLight
}

// hit intersects the ray o + t d with the scene: for the sphere, the smaller
// root of |o + t d|^2 = 1 (t^2 + 2 (o.d) t + |o|^2 - 1 = 0, |d| = 1).
func (s *testScene) hit(o, d v3) (p, n v3, ok bool) {
	if s.sphere {
		b := o.dot(d)
		c := o.dot(o) - 1
		disc := b*b - c
		if disc <= 0 {
			return p, n, false
		}
		t := -b - math.Sqrt(disc)
		if t <= 0 {
			return p, n, false
		}
		p = o.add(d.mul(t))
		return p, p.norm(), true
	}
	if d.z == 0 {
		return p, n, false
	}
	t := -o.z / d.z
	if t <= 0 {
		return p, n, false
	}
	p = o.add(d.mul(t))
	if math.Abs(p.x) > 1 || math.Abs(p.y) > 1 {
		return p, n, false
	}
	return p, v3{0, 0, 1}, true
}

// render returns the observations of the scene for the given material.
// noise > 0 multiplies each channel by (1 + noise * N(0,1)).
func (s *testScene) render(kind brdf.Kind, diffuse, f0 [3]float64, rough float64, noise float64, rng *rand.Rand) *Observations {
	obs := &Observations{}
	fwd := v3{0, 0, 0}.sub(s.cam).norm()
	up := v3{0, 1, 0}
	if math.Abs(fwd.dot(up)) > 0.9 {
		up = v3{1, 0, 0}
	}
	right := fwd.cross(up).norm()
	down := fwd.cross(right)
	tanh := math.Tan(s.fov / 2)
	for pi, lights := range s.photos {
		for y := 0; y < s.res; y++ {
			for x := 0; x < s.res; x++ {
				u := (2*(float64(x)+0.5)/float64(s.res) - 1) * tanh
				w := (2*(float64(y)+0.5)/float64(s.res) - 1) * tanh
				d := fwd.add(right.mul(u)).add(down.mul(w)).norm()
				p, n, ok := s.hit(s.cam, d)
				if !ok {
					continue
				}
				v := s.cam.sub(p).norm()
				if n.dot(v) < 0.15 {
					continue
				}
				t := n.cross(v3{0.3, 0.5, 0.7}.norm()).norm()
				b := n.cross(t)
				var rad [3]float64
				nl := 0
				for _, L := range lights {
					var l v3
					var e [3]float64
					if L.point {
						dl := L.pos.sub(p)
						r2 := dl.dot(dl)
						l = dl.norm()
						for c := range e {
							e[c] = L.power[c] / r2
						}
					} else {
						l = L.pos.norm()
						e = L.power
					}
					cos := n.dot(l)
					if cos < 0.15 {
						continue
					}
					f := gltfBRDF(kind, diffuse, f0, rough, n, v, l)
					for c := range e {
						e[c] *= cos
						rad[c] += f[c] * e[c]
					}
					obs.AddLight(l.local(t, b, n), e)
					nl++
				}
				if nl == 0 {
					continue
				}
				if noise > 0 {
					for c := range rad {
						rad[c] *= 1 + noise*rng.NormFloat64()
					}
				}
				obs.Add(v.local(t, b, n), rad, pi)
			}
		}
	}
	return obs
}

// sphereScene: a camera on +z, one light per photo from several directions,
// directional and point, so that highlights fall at different places.
func sphereScene(res int) *testScene {
	return &testScene{
		sphere: true, cam: v3{0, 0, 5}, fov: 0.45, res: res,
		photos: [][]testLight{
			{{point: false, pos: v3{0, 0, 1}, power: [3]float64{3, 3, 3}}},
			{{point: false, pos: v3{0.8, 0.3, 1}, power: [3]float64{2.5, 2.5, 2.5}}},
			{{point: true, pos: v3{-2, 1, 3}, power: [3]float64{30, 30, 28}}},
			{{point: true, pos: v3{1, -2.5, 2}, power: [3]float64{25, 26, 30}}},
			{{point: false, pos: v3{-0.5, -0.9, 0.6}, power: [3]float64{2, 2, 2}}},
			// A photo lit by two lights at once.
			{{point: true, pos: v3{2, 2, 2}, power: [3]float64{15, 15, 15}}, {point: false, pos: v3{-1, 0, 0.5}, power: [3]float64{1, 1, 1}}},
		},
	}
}

// planeScene: a camera above the plane, point lights placed so that their
// mirror points land on the plane, plus one grazing directional light.
func planeScene(res int) *testScene {
	return &testScene{
		sphere: false, cam: v3{0.2, -0.3, 2}, fov: 1.0, res: res,
		photos: [][]testLight{
			{{point: true, pos: v3{-0.5, 0.4, 1.5}, power: [3]float64{4, 4, 4}}},
			{{point: true, pos: v3{0.6, 0.6, 1.2}, power: [3]float64{3, 3, 3.2}}},
			{{point: true, pos: v3{-0.2, -0.8, 0.9}, power: [3]float64{2, 2.2, 2}}},
			{{point: false, pos: v3{0.5, 0.2, 1}, power: [3]float64{2, 2, 2}}},
			{{point: true, pos: v3{0.9, -0.5, 0.6}, power: [3]float64{1.5, 1.5, 1.5}}},
		},
	}
}

// truthVector is the brdf vector of a test material.
func truthParams(kind brdf.Kind, diffuse, f0 [3]float64, rough float64) brdf.Params {
	p := brdf.Params{Kind: kind, Roughness: rough, Specular: f0}
	if kind != brdf.Metal {
		p.Diffuse = diffuse
	}
	return p
}
