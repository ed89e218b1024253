package fit

import "patina/brdf"

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
	// segments' albedos (see indirect.go).
	IndK    []float32
	IndSegs int
	// AR, AG, AB, when not empty, are the indirect irradiance at each
	// observation estimated from IndK and the current albedos; the forward
	// model adds the reflection of it (ambientResponse).
	AR, AG, AB []float32
	// matteMetal makes the forward model treat a metal's lobe as matte for
	// the indirect term (the sensitivity refit of metalIndirectSigma).
	matteMetal bool
}

// Len is the number of observations.
func (o *Observations) Len() int { return len(o.WoX) }

// NumLightSamples is the number of (observation, light) pairs.
func (o *Observations) NumLightSamples() int { return len(o.WiX) }

// Bytes is the memory the arrays hold (their length, not capacity).
func (o *Observations) Bytes() int {
	return 4 * (9*o.Len() + 6*o.NumLightSamples() + len(o.IndK) + len(o.AR) + len(o.AG) + len(o.AB))
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
}

// Append adds all of other's observations to o.
func (o *Observations) Append(other *Observations) {
	base := int32(len(o.WiX))
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
	for _, a := range [][]float32{o.ER, o.EG, o.EB, o.IndK, o.AR, o.AG, o.AB} {
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
