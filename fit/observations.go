package fit

import (
	"patina/brdf"
	"patina/render"
)

// Observations holds the trustworthy pixels of one segment in the compact
// form the objective streams over: structure of arrays, float32, with every
// direction already in the local shading frame (z = shading normal), so the
// fit never touches world geometry again.
//
// An observation is one pixel of one photo. It is lit by one or more light
// samples (one per unshadowed light of the photo), stored in the second group
// of arrays; LightEnd says which light samples belong to which observation.
type Observations struct {
	// Per observation.

	// WoX, WoY, WoZ are the unit direction towards the camera.
	WoX, WoY, WoZ []float32
	// R, G, B are the observed radiance, linear, in the capture's radiance
	// scale (after the photo's exposure).
	R, G, B []float32
	// Photo is the index of the observation's photo in the capture.
	Photo []int32
	// LightEnd[i] is one past the last light sample of observation i; the
	// first is LightEnd[i-1] (0 for i = 0).
	LightEnd []int32

	// Per light sample.

	// WiX, WiY, WiZ are the unit direction towards the light.
	WiX, WiY, WiZ []float32
	// ER, EG, EB are the irradiance the light delivers to the surface, with
	// the cosine of incidence included: intensity / r^2 * cos(theta_i) for a
	// point light, irradiance * cos(theta_i) for a directional one. The
	// forward model is then radiance = sum over samples of BRDF * E.
	ER, EG, EB []float32

	// Indirect light (optional).

	// IndK, when not empty, holds for every observation and every segment
	// s of the set the one-bounce indirect irradiance factor K[s][c]
	// (stride 3*IndSegs): light of the photo's lights reflected once by
	// segment s towards the observed point, per unit albedo of s, so that
	// the indirect irradiance is sum over s of a[s][c] * K[s][c] with a the
	// segments' albedos (see indirect.go). BuildObservations leaves it
	// empty and keeps the rays themselves (RayEnd); IndSegs, the number of
	// segments of the set, is set whenever indirect rays were cast.
	IndK    []float32
	IndSegs int
	// AR, AG, AB, when not empty, are the indirect irradiance at each
	// observation estimated from the ray entries (or IndK) and the current
	// parameters; the forward model adds the reflection of it
	// (ambientResponse).
	AR, AG, AB []float32
	// matteMetal makes the forward model treat a metal's lobe as matte for
	// the indirect term (the sensitivity refit of metalIndirectSigma).
	matteMetal bool

	// Indirect rays (optional).

	// RayEnd[i], when not empty, is one past the last ray entry of
	// observation i. A ray entry is one cosine-weighted ray from the
	// observed point that met segment RaySeg at a point y, and one light of
	// the photo that reaches y: RayWo and RayWi are the directions from y
	// towards the observed point and towards the light in y's local frame,
	// and RayER, RayEG, RayEB the irradiance that light delivers at y
	// (cosine included) divided by the number of rays cast. With segment
	// s's parameters p_s the entry sends pi f_s(RayWo, RayWi) RayE of
	// irradiance to the observed point (indirect.go).
	RayEnd                 []int32
	RaySeg                 []int16
	RayWoX, RayWoY, RayWoZ []float32
	RayWiX, RayWiY, RayWiZ []float32
	RayER, RayEG, RayEB    []float32
	// LightRay, when not empty, tells per light sample where its light
	// comes from: -1 a light of the photo; r >= 0 ray entry r, the light
	// sample then being that ray's direction with ER, EG, EB the irradiance
	// the entry sends (0 until the first estimate): a metal's lobe weighs
	// the indirect light by direction, like a light's.
	LightRay []int32
	// LightW, when not empty, weighs an indirect light sample's irradiance
	// (poolIndirect: an observation shares its neighbours' rays); empty
	// means 1.
	LightW []float32
	// nrm holds, while the observations are built, every observation's
	// world shading normal (3 per observation) for poolIndirect, which
	// needs each observation's local frame.
	nrm []float32

	// Clipped observations (optional).

	// Censored, when not empty, holds per observation a bit mask of its
	// clipped channels (bit 0 red, 1 green, 2 blue): the pixel reached the
	// photo's saturation level there, so the true radiance is only known to
	// be at least the value stored in R, G or B (the clip level). Such a
	// channel enters the loss as a censored observation (objective.go).
	Censored []uint8
	// ClipSigma is the scale, in log radiance, of the censored channels'
	// likelihood (about the relative noise of an observation, see
	// objective.go); 0 means defaultClipSigma.
	ClipSigma float64
}

// Len is the number of observations.
func (o *Observations) Len() int { return len(o.WoX) }

// NumLightSamples is the number of (observation, light) pairs.
func (o *Observations) NumLightSamples() int { return len(o.WiX) }

// Bytes is the memory the arrays hold (their length, not capacity).
func (o *Observations) Bytes() int {
	return 4*(9*o.Len()+6*o.NumLightSamples()+len(o.IndK)+len(o.AR)+len(o.AG)+len(o.AB)+
		len(o.RayEnd)+9*len(o.RaySeg)+len(o.LightRay)+len(o.LightW)) + 2*len(o.RaySeg) + len(o.Censored)
}

// indirectSample reports whether light sample l is an indirect one.
func (o *Observations) indirectSample(l int) bool {
	return len(o.LightRay) > 0 && o.LightRay[l] >= 0
}

// NumIndirectSamples is the number of directional indirect light samples.
func (o *Observations) NumIndirectSamples() int {
	n := 0
	for _, r := range o.LightRay {
		if r >= 0 {
			n++
		}
	}
	return n
}

// rays returns the range of ray entries of observation i.
func (o *Observations) rays(i int) (start, end int) {
	if len(o.RayEnd) == 0 {
		return 0, 0
	}
	if i > 0 {
		start = int(o.RayEnd[i-1])
	}
	return start, int(o.RayEnd[i])
}

// AddRay appends a ray entry to the last observation added (see RayEnd);
// with directional set it also becomes a light sample of that
// observation in direction wi (the ray's direction at the observed point,
// local frame).
func (o *Observations) AddRay(wi brdf.Vec, seg int, wo, wl brdf.Vec, e [3]float64, directional bool) {
	n := o.Len()
	if n == 0 {
		panic("fit: internal: ray entry without an observation")
	}
	if len(o.RayEnd) == 0 {
		o.RayEnd = make([]int32, n)
	}
	o.RaySeg = append(o.RaySeg, int16(seg))
	o.RayWoX = append(o.RayWoX, float32(wo.X))
	o.RayWoY = append(o.RayWoY, float32(wo.Y))
	o.RayWoZ = append(o.RayWoZ, float32(wo.Z))
	o.RayWiX = append(o.RayWiX, float32(wl.X))
	o.RayWiY = append(o.RayWiY, float32(wl.Y))
	o.RayWiZ = append(o.RayWiZ, float32(wl.Z))
	o.RayER = append(o.RayER, float32(e[0]))
	o.RayEG = append(o.RayEG, float32(e[1]))
	o.RayEB = append(o.RayEB, float32(e[2]))
	o.RayEnd[n-1] = int32(len(o.RaySeg))
	if !directional {
		return
	}
	if len(o.LightRay) == 0 {
		o.LightRay = make([]int32, len(o.WiX))
		for i := range o.LightRay {
			o.LightRay[i] = -1
		}
	}
	o.WiX = append(o.WiX, float32(wi.X))
	o.WiY = append(o.WiY, float32(wi.Y))
	o.WiZ = append(o.WiZ, float32(wi.Z))
	o.ER = append(o.ER, 0)
	o.EG = append(o.EG, 0)
	o.EB = append(o.EB, 0)
	o.LightRay = append(o.LightRay, int32(len(o.RaySeg)-1))
	if len(o.LightW) > 0 {
		o.LightW = append(o.LightW, 1)
	}
	o.LightEnd[n-1] = int32(len(o.WiX))
}

// lightWeight is the weight of light sample l (LightW).
func (o *Observations) lightWeight(l int) float64 {
	if len(o.LightW) == 0 {
		return 1
	}
	return float64(o.LightW[l])
}

// photoRun returns the window [lo, hi) of observations around i, at most
// h on each side, that share i's photo: BuildObservations adds a photo's
// observations of a segment one after another, in the raster order of the
// photo, so these are the pixels drawn next to i on the surface.
func (o *Observations) photoRun(i, h int) (lo, hi int) {
	p := o.Photo[i]
	lo, hi = i, i+1
	for lo > 0 && i-lo < h && o.Photo[lo-1] == p {
		lo--
	}
	for hi < o.Len() && hi-1-i < h && o.Photo[hi] == p {
		hi++
	}
	return lo, hi
}

// poolIndirect gives every observation the indirect light samples of the
// observations within h of it in the same photo (photoRun), each weighted
// by one over their number, in place of its own: the light a metal
// reflects from its surroundings varies slowly across the surface, and a
// few rays per observation leave an estimate that is zero for most
// observations and large for a few. The log residual turns that spread
// into a bias (the mean of log(D + noisy I) lies below log(D + I):
// Jensen's inequality), which a fit without near-specular observations
// reads as a rougher, darker metal. Pooling is the interpolation of
// indirect light between nearby points of irradiance caching (Ward,
// Rubinstein and Clear, "A ray tracing solution for diffuse
// interreflection", SIGGRAPH 1988), here by simple averaging. A
// neighbour's rays are turned from its local frame into the observation's
// (through the world shading normals kept while building, nrm); without
// them they are taken as they are.
func (o *Observations) poolIndirect(h int) {
	defer func() { o.nrm = nil }()
	if len(o.LightRay) == 0 || h <= 0 {
		return
	}
	n := o.Len()
	frames := len(o.nrm) == 3*n
	frame := func(i int) render.Frame {
		return render.NewFrame(render.V3(float64(o.nrm[3*i]), float64(o.nrm[3*i+1]), float64(o.nrm[3*i+2])))
	}
	var wx, wy, wz, er, eg, eb, ww []float32
	var lr []int32
	end := make([]int32, n)
	for i := 0; i < n; i++ {
		s, e := o.lights(i)
		for l := s; l < e; l++ {
			if o.LightRay[l] < 0 {
				wx, wy, wz = append(wx, o.WiX[l]), append(wy, o.WiY[l]), append(wz, o.WiZ[l])
				er, eg, eb = append(er, o.ER[l]), append(eg, o.EG[l]), append(eb, o.EB[l])
				lr, ww = append(lr, -1), append(ww, 1)
			}
		}
		lo, hi := o.photoRun(i, h)
		w := float32(1 / float64(hi-lo))
		var fi render.Frame
		if frames {
			fi = frame(i)
		}
		for k := lo; k < hi; k++ {
			var fk render.Frame
			if frames && k != i {
				fk = frame(k)
			}
			s, e := o.lights(k)
			for l := s; l < e; l++ {
				if o.LightRay[l] >= 0 {
					dx, dy, dz := o.WiX[l], o.WiY[l], o.WiZ[l]
					if frames && k != i {
						d := fi.ToLocal(fk.ToWorld(brdf.Vec{X: float64(dx), Y: float64(dy), Z: float64(dz)}))
						if d.Z <= 0 {
							continue // below this observation's horizon
						}
						dx, dy, dz = float32(d.X), float32(d.Y), float32(d.Z)
					}
					wx, wy, wz = append(wx, dx), append(wy, dy), append(wz, dz)
					er, eg, eb = append(er, 0), append(eg, 0), append(eb, 0)
					lr, ww = append(lr, o.LightRay[l]), append(ww, w*float32(o.lightWeight(l)))
				}
			}
		}
		end[i] = int32(len(wx))
	}
	o.WiX, o.WiY, o.WiZ, o.ER, o.EG, o.EB = wx, wy, wz, er, eg, eb
	o.LightRay, o.LightW, o.LightEnd = lr, ww, end
}

// censored returns observation i's mask of clipped channels.
func (o *Observations) censored(i int) uint8 {
	if len(o.Censored) == 0 {
		return 0
	}
	return o.Censored[i]
}

// NumCensored is the number of observations with at least one clipped
// channel.
func (o *Observations) NumCensored() int {
	n := 0
	for _, c := range o.Censored {
		if c != 0 {
			n++
		}
	}
	return n
}

// AddLight appends a light sample to the observation being built; Add closes
// that observation. wi is the unit direction towards the light and e the
// irradiance at the surface including the cosine of incidence.
func (o *Observations) AddLight(wi brdf.Vec, e [3]float64) {
	o.WiX = append(o.WiX, float32(wi.X))
	o.WiY = append(o.WiY, float32(wi.Y))
	o.WiZ = append(o.WiZ, float32(wi.Z))
	o.ER = append(o.ER, float32(e[0]))
	o.EG = append(o.EG, float32(e[1]))
	o.EB = append(o.EB, float32(e[2]))
	if len(o.LightRay) > 0 {
		o.LightRay = append(o.LightRay, -1)
	}
	if len(o.LightW) > 0 {
		o.LightW = append(o.LightW, 1)
	}
}

// Add closes an observation: the light samples added since the previous Add
// are its lights. wo is the unit direction towards the camera, radiance the
// observed pixel and photo the photo's index in the capture.
func (o *Observations) Add(wo brdf.Vec, radiance [3]float64, photo int) {
	o.WoX = append(o.WoX, float32(wo.X))
	o.WoY = append(o.WoY, float32(wo.Y))
	o.WoZ = append(o.WoZ, float32(wo.Z))
	o.R = append(o.R, float32(radiance[0]))
	o.G = append(o.G, float32(radiance[1]))
	o.B = append(o.B, float32(radiance[2]))
	o.Photo = append(o.Photo, int32(photo))
	o.LightEnd = append(o.LightEnd, int32(len(o.WiX)))
	if len(o.Censored) > 0 {
		o.Censored = append(o.Censored, 0)
	}
	if len(o.RayEnd) > 0 {
		o.RayEnd = append(o.RayEnd, int32(len(o.RaySeg)))
	}
}

// AddCensored is Add for a pixel whose channels in mask (bit 0 red, 1
// green, 2 blue) reached the photo's saturation level: radiance holds the
// clip level in those channels, a lower bound of the true radiance.
func (o *Observations) AddCensored(wo brdf.Vec, radiance [3]float64, mask uint8, photo int) {
	o.Add(wo, radiance, photo)
	mask &= 7
	if mask == 0 {
		return
	}
	if len(o.Censored) == 0 {
		o.Censored = make([]uint8, o.Len())
	}
	o.Censored[o.Len()-1] = mask
}

// Append adds all of other's observations to o.
func (o *Observations) Append(other *Observations) {
	n0, l0 := o.Len(), len(o.WiX) // before: observations, light samples
	rbase := int32(len(o.RaySeg))
	if len(o.Censored) > 0 || len(other.Censored) > 0 {
		if len(o.Censored) == 0 {
			o.Censored = make([]uint8, n0)
		}
		if len(other.Censored) > 0 {
			o.Censored = append(o.Censored, other.Censored...)
		} else {
			o.Censored = append(o.Censored, make([]uint8, other.Len())...)
		}
	}
	if len(o.RayEnd) > 0 || len(other.RayEnd) > 0 {
		if len(o.RayEnd) == 0 {
			o.RayEnd = make([]int32, n0)
		}
		if len(other.RayEnd) > 0 {
			for _, e := range other.RayEnd {
				o.RayEnd = append(o.RayEnd, e+rbase)
			}
		} else {
			for range other.WoX {
				o.RayEnd = append(o.RayEnd, rbase)
			}
		}
		o.RaySeg = append(o.RaySeg, other.RaySeg...)
		o.RayWoX = append(o.RayWoX, other.RayWoX...)
		o.RayWoY = append(o.RayWoY, other.RayWoY...)
		o.RayWoZ = append(o.RayWoZ, other.RayWoZ...)
		o.RayWiX = append(o.RayWiX, other.RayWiX...)
		o.RayWiY = append(o.RayWiY, other.RayWiY...)
		o.RayWiZ = append(o.RayWiZ, other.RayWiZ...)
		o.RayER = append(o.RayER, other.RayER...)
		o.RayEG = append(o.RayEG, other.RayEG...)
		o.RayEB = append(o.RayEB, other.RayEB...)
	}
	if len(o.LightRay) > 0 || len(other.LightRay) > 0 {
		if len(o.LightRay) == 0 {
			o.LightRay = make([]int32, l0)
			for i := range o.LightRay {
				o.LightRay[i] = -1
			}
		}
		if len(other.LightRay) > 0 {
			for _, r := range other.LightRay {
				if r >= 0 {
					r += rbase
				}
				o.LightRay = append(o.LightRay, r)
			}
		} else {
			for range other.WiX {
				o.LightRay = append(o.LightRay, -1)
			}
		}
	}
	if len(o.LightW) > 0 || len(other.LightW) > 0 {
		for len(o.LightW) < l0 {
			o.LightW = append(o.LightW, 1)
		}
		if len(other.LightW) > 0 {
			o.LightW = append(o.LightW, other.LightW...)
		} else {
			for range other.WiX {
				o.LightW = append(o.LightW, 1)
			}
		}
	}
	base := int32(l0)
	o.WoX = append(o.WoX, other.WoX...)
	o.WoY = append(o.WoY, other.WoY...)
	o.WoZ = append(o.WoZ, other.WoZ...)
	o.R = append(o.R, other.R...)
	o.G = append(o.G, other.G...)
	o.B = append(o.B, other.B...)
	o.Photo = append(o.Photo, other.Photo...)
	for _, e := range other.LightEnd {
		o.LightEnd = append(o.LightEnd, e+base)
	}
	o.WiX = append(o.WiX, other.WiX...)
	o.WiY = append(o.WiY, other.WiY...)
	o.WiZ = append(o.WiZ, other.WiZ...)
	o.ER = append(o.ER, other.ER...)
	o.EG = append(o.EG, other.EG...)
	o.EB = append(o.EB, other.EB...)
	if other.IndSegs > 0 {
		o.IndSegs = other.IndSegs
		o.IndK = append(o.IndK, other.IndK...)
	}
	if len(o.nrm) == 3*n0 && len(other.nrm) == 3*other.Len() {
		o.nrm = append(o.nrm, other.nrm...)
	} else {
		o.nrm = nil
	}
}

// lights returns the range of light samples of observation i.
func (o *Observations) lights(i int) (start, end int) {
	if i > 0 {
		start = int(o.LightEnd[i-1])
	}
	return start, int(o.LightEnd[i])
}

// ScaleIrradiance multiplies every light sample's irradiance by s: this is
// how the radiometric scale solved from a calibration target is applied.
func (o *Observations) ScaleIrradiance(s float64) {
	for _, a := range [][]float32{o.ER, o.EG, o.EB, o.IndK, o.AR, o.AG, o.AB, o.RayER, o.RayEG, o.RayEB} {
		for i := range a {
			a[i] = float32(float64(a[i]) * s)
		}
	}
}

// halfCos returns the largest cosine between the shading normal and the half
// vector of observation i over its light samples: 1 means the camera sees
// the mirror reflection of a light exactly.
func (o *Observations) halfCos(i int) float64 {
	s, e := o.lights(i)
	wx, wy, wz := float64(o.WoX[i]), float64(o.WoY[i]), float64(o.WoZ[i])
	best := -1.0
	for l := s; l < e; l++ {
		if o.indirectSample(l) {
			continue
		}
		hx, hy, hz := wx+float64(o.WiX[l]), wy+float64(o.WiY[l]), wz+float64(o.WiZ[l])
		n := hx*hx + hy*hy + hz*hz
		if n == 0 {
			continue
		}
		if c := hz / sqrt(n); c > best {
			best = c
		}
	}
	return best
}
