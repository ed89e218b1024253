package render

import (
	"fmt"
	"math"

	"patina/brdf"
)

// LightKind says which kind of emitter a Light is.
type LightKind uint8

const (
	// PointLight is an isotropic point emitter of radiant intensity
	// Intensity (W/sr per channel) at Position; irradiance falls off with
	// the inverse square of distance.
	PointLight LightKind = iota
	// DirectionalLight is a distant emitter: Irradiance (W/m^2 per channel)
	// arrives on a surface facing it, from Direction.
	DirectionalLight
	// SphereLight is a uniformly emitting sphere of radius Radius at
	// Position whose far-field radiant intensity is Intensity, so it can
	// replace a point light of the same Intensity and give soft shadows.
	// Its surface radiance is Intensity / (pi Radius^2). Radius 0 behaves
	// as a PointLight.
	SphereLight
)

// String names the kind as the capture file does.
func (k LightKind) String() string {
	switch k {
	case PointLight:
		return "point"
	case DirectionalLight:
		return "directional"
	case SphereLight:
		return "sphere"
	}
	return fmt.Sprintf("LightKind(%d)", uint8(k))
}

// Light is one emitter of the scene besides the environment. Lights do not
// cast shadows on each other and are not reflected by the environment.
type Light struct {
	Kind LightKind
	// Position is the centre of a point or sphere light (m).
	Position Vec3
	// Intensity is the radiant intensity of a point or sphere light (W/sr
	// per channel, in the capture's relative photometric scale).
	Intensity brdf.RGB
	// Direction points from the scene towards a directional light; it need
	// not be unit length.
	Direction Vec3
	// Irradiance is a directional light's irradiance on a surface facing it
	// (W/m^2 per channel).
	Irradiance brdf.RGB
	// Radius is a sphere light's radius (m).
	Radius float64
}

// Validate checks that the light's numbers are usable.
func (l *Light) Validate() error {
	finite := func(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
	nonneg := func(c brdf.RGB) bool {
		return c[0] >= 0 && c[1] >= 0 && c[2] >= 0 && finite(c[0]) && finite(c[1]) && finite(c[2])
	}
	switch l.Kind {
	case PointLight, SphereLight:
		if !finite(l.Position.X) || !finite(l.Position.Y) || !finite(l.Position.Z) {
			return fmt.Errorf("render: %s light position %v is not finite", l.Kind, l.Position)
		}
		if !nonneg(l.Intensity) {
			return fmt.Errorf("render: %s light intensity %v: expected finite values >= 0", l.Kind, l.Intensity)
		}
		if l.Kind == SphereLight && !(l.Radius >= 0 && finite(l.Radius)) {
			return fmt.Errorf("render: sphere light radius %v: expected a finite value >= 0", l.Radius)
		}
	case DirectionalLight:
		if n := l.Direction.Len(); !(n > 0) || !finite(n) {
			return fmt.Errorf("render: directional light direction %v is not a usable direction", l.Direction)
		}
		if !nonneg(l.Irradiance) {
			return fmt.Errorf("render: directional light irradiance %v: expected finite values >= 0", l.Irradiance)
		}
	default:
		return fmt.Errorf("render: unknown light kind %d", l.Kind)
	}
	return nil
}

// area reports whether a BRDF-sampled ray can hit the light (so that MIS
// applies): only sphere lights with a radius.
func (l *Light) area() bool { return l.Kind == SphereLight && l.Radius > 0 }

// lightSample is one sampled direction towards a light from a point.
type lightSample struct {
	wi   Vec3     // unit direction towards the light
	dist float64  // distance to the emitting point (+Inf for directional)
	li   brdf.RGB // incident radiance (area lights) or irradiance-like value (delta lights)
	pdf  float64  // solid-angle density; 0 for delta lights
}

// sample draws a direction towards the light from p with two uniform
// numbers. ok is false when the light cannot illuminate p (p inside a
// sphere light, zero distance).
func (l *Light) sample(p Vec3, u0, u1 float64) (s lightSample, ok bool) {
	switch l.Kind {
	case DirectionalLight:
		return lightSample{wi: l.Direction.Norm(), dist: math.Inf(1), li: l.Irradiance}, true
	case PointLight, SphereLight:
		d := l.Position.Sub(p)
		d2 := d.Len2()
		if !(d2 > 0) {
			return s, false
		}
		dist := math.Sqrt(d2)
		w := d.Mul(1 / dist)
		if l.Kind == PointLight || l.Radius == 0 {
			inv := 1 / d2
			return lightSample{wi: w, dist: dist, li: brdf.RGB{l.Intensity[0] * inv, l.Intensity[1] * inv, l.Intensity[2] * inv}}, true
		}
		r := l.Radius
		if dist <= r*(1+1e-9) {
			return s, false
		}
		// Uniform sampling of the cone of directions subtended by the
		// sphere (Physically Based Rendering, 3rd ed., section 14.2.2).
		sin2Max := r * r / d2
		cosMax := math.Sqrt(math.Max(0, 1-sin2Max))
		oneMinus := sin2Max / (1 + cosMax) // 1 - cosMax without cancellation
		cosT := 1 - u0*oneMinus
		sinT := math.Sqrt(math.Max(0, 1-cosT*cosT))
		phi := 2 * math.Pi * u1
		f := NewFrame(w)
		wi := f.T.Mul(sinT * math.Cos(phi)).Add(f.B.Mul(sinT * math.Sin(phi))).Add(w.Mul(cosT))
		t, hit := raySphere(p, wi, l.Position, r)
		if !hit {
			// Grazing the silhouette: take the tangent distance.
			t = math.Sqrt(math.Max(0, d2-r*r))
		}
		L := l.Intensity
		k := 1 / (math.Pi * r * r)
		return lightSample{wi: wi, dist: t, li: brdf.RGB{L[0] * k, L[1] * k, L[2] * k}, pdf: 1 / (2 * math.Pi * oneMinus)}, true
	}
	return s, false
}

// pdf is the solid-angle density with which sample returns the unit
// direction wi from p (area lights only; 0 outside the cone).
func (l *Light) pdf(p, wi Vec3) float64 {
	if !l.area() {
		return 0
	}
	d := l.Position.Sub(p)
	d2 := d.Len2()
	r := l.Radius
	if d2 <= r*r {
		return 0
	}
	sin2Max := r * r / d2
	cosMax := math.Sqrt(math.Max(0, 1-sin2Max))
	if wi.Dot(d) < cosMax*math.Sqrt(d2) {
		return 0
	}
	return 1 / (2 * math.Pi * sin2Max / (1 + cosMax))
}

// radiance is the emitted radiance of an area light's surface.
func (l *Light) radiance() brdf.RGB {
	k := 1 / (math.Pi * l.Radius * l.Radius)
	return brdf.RGB{l.Intensity[0] * k, l.Intensity[1] * k, l.Intensity[2] * k}
}

// raySphere returns the nearest positive distance along the unit
// direction d from o to the sphere (c, r).
func raySphere(o, d, c Vec3, r float64) (float64, bool) {
	oc := o.Sub(c)
	b := oc.Dot(d)
	cc := oc.Len2() - r*r
	disc := b*b - cc
	if disc < 0 {
		return 0, false
	}
	sq := math.Sqrt(disc)
	// Numerically stable pair of roots.
	var q float64
	if b > 0 {
		q = -b - sq
	} else {
		q = -b + sq
	}
	t0, t1 := q, cc/q
	if q == 0 {
		t0, t1 = 0, 0
	}
	if t0 > t1 {
		t0, t1 = t1, t0
	}
	if t0 > 0 {
		return t0, true
	}
	if t1 > 0 {
		return t1, true
	}
	return 0, false
}

// Lights is everything that emits light in a render: discrete lights and
// an optional environment.
type Lights struct {
	Lights      []Light
	Environment *Environment // nil: black surroundings
}

// Validate checks every light.
func (ls *Lights) Validate() error {
	for i := range ls.Lights {
		if err := ls.Lights[i].Validate(); err != nil {
			return fmt.Errorf("light %d: %w", i, err)
		}
	}
	return nil
}
