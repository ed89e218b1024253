package fit

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"

	"patina/assets/capture"
	"patina/brdf"
	"patina/render"
)

// Indirect light.
//
// The photos record all the light a surface reflects, including light that
// first bounced off the object itself or the calibration card under it; a
// direct-lighting model attributes that extra light to the surface and
// makes a concave or low-lying segment too bright (the demo's foot ring
// stands on its grey card and came out 40% too bright). The fit therefore
// adds a one-bounce indirect term, estimated once while the observations are
// built and combined with the fitted albedos between stages:
//
//  1. For every observation, IndirectSamples cosine-weighted rays leave the
//     surface point x; where a ray hits the mesh at y on segment s, every
//     light of the photo that reaches y (shadow rays) gives a ray entry
//     (Observations.RayEnd): the directions at y towards x and towards the
//     light, in y's shading frame, and the light's irradiance E_l(y) there.
//     The radiance y sends to x is sum over l of f_s(wo_y, wi_l) E_l(y),
//     with f_s segment s's BRDF at its current parameters, and the
//     cosine-weighted Monte Carlo estimate of the indirect irradiance at x
//     is pi/N times the sum of that over the rays (Pharr, Jakob and
//     Humphreys, "Physically Based Rendering", 3rd ed., 2016, sections
//     13.6.3 and 14.5). The entries depend only on geometry and lights, so
//     they are made once. (Observations.IndK can hold the same rays summed
//     per segment as if every neighbour were Lambertian, K_s = (1/N) sum of
//     E(y), the estimate used before the entries existed and still used
//     for observations without entries; BuildObservations no longer keeps
//     it, as the entries cost less memory. Taking the card,
//     seen by the foot at grazing angles, as Lambertian overstated the
//     light it sends by about a third, since the diffuse lobe's Fresnel
//     weighting (1 - S(n.v)) darkens it there.)
//  2. After a fit, estimateAmbient evaluates every entry with the fitted
//     parameters, and the forward model adds the reflection of that light by
//     the observed surface: for a dielectric or free model as if both lobes
//     were matte, (d (1 - F0) + F0) E_ind / pi (Observations.AR, AG, AB;
//     the light arrives from all over the hemisphere, where a matte
//     lobe's response does not depend on its direction); for a metal,
//     whose glossy lobe's does, every entry is a light sample in its ray's
//     direction (Observations.LightRay), weighted by the lobe like a lamp.
//     The estimate of an observation is the average over its neighbours in
//     the same photo (poolIndirect, photoRun), nine observations' rays: a
//     few rays alone leave a spread the log residual turns into a bias.
//  3. Every segment is fitted again, warm-started, with that term fixed;
//     Options.IndirectStages rounds of 2 and 3 follow the first fit. The
//     fits that only feed the next estimate stop at a relative loss change
//     of looseRelTol; the last one at Options.RelTol.
//
// What is left out: second and later bounces (a few percent of the first
// for albedos below 0.5), caustics a few rays cannot find (a glossy
// neighbour's highlight is found only by the rays that happen to meet its
// mirror direction), and surfaces outside the mesh (a table, walls).

// albedoOf is a_c = d_c (1 - F0_c) + F0_c of p's effective colours.
func albedoOf(p *brdf.Params) [3]float64 {
	var v [brdf.MaxParams]float64
	p.Vector(v[:0])
	d, s := effectiveColours(p.Kind, v[:])
	var a [3]float64
	for c := 0; c < 3; c++ {
		a[c] = d[c]*(1-s[c]) + s[c]
	}
	return a
}

// effectiveColours returns the diffuse and F0 colours of a parameter
// vector of kind.
func effectiveColours(kind brdf.Kind, v []float64) (d, s [3]float64) {
	switch kind {
	case brdf.Dielectric:
		return [3]float64{v[0], v[1], v[2]}, [3]float64{v[3], v[3], v[3]}
	case brdf.Metal:
		return [3]float64{}, [3]float64{v[0], v[1], v[2]}
	}
	return [3]float64{v[0], v[1], v[2]}, [3]float64{v[3], v[4], v[5]}
}

// ambientResponse returns R_c = (d_c (1 - F0_c) + F0_c) / pi, the radiance
// the observed surface reflects per unit of indirect irradiance as if both
// lobes were matte, and its derivatives with respect to p's vector:
// dR[c][k]. A metal gets R = 0, no matte term: its glossy lobe reflects
// only what lies near the mirror direction, which a hemisphere average
// misjudges badly (on the demo's gilding, treating the lobe as matte took
// 45% of its F0 away); its indirect light comes in as directional light
// samples instead (Observations.LightRay). A dielectric's specular lobe
// reflects a few percent of the indirect light, where the same
// approximation costs little.
func ambientResponse(p *brdf.Params, dR *[3][brdf.MaxParams]float64) [3]float64 {
	return ambientResponseMatte(p, dR, false)
}

// ambientResponseMatte is ambientResponse; with matteMetal a metal's lobe
// is treated as matte too, R = F0 / pi (only for the sensitivity refit of
// a metal's sigma, see metalIndirectSigma).
func ambientResponseMatte(p *brdf.Params, dR *[3][brdf.MaxParams]float64, matteMetal bool) [3]float64 {
	var r [3]float64
	if p.Kind == brdf.Metal && matteMetal {
		if dR != nil {
			*dR = [3][brdf.MaxParams]float64{}
			for c := 0; c < 3; c++ {
				dR[c][c] = 1 / math.Pi
			}
		}
		for c := 0; c < 3; c++ {
			r[c] = p.Specular[c] / math.Pi
		}
		return r
	}
	if p.Kind == brdf.Metal {
		if dR != nil {
			*dR = [3][brdf.MaxParams]float64{}
		}
		return r
	}
	var v [brdf.MaxParams]float64
	p.Vector(v[:0])
	d, s := effectiveColours(p.Kind, v[:])
	for c := 0; c < 3; c++ {
		r[c] = (d[c]*(1-s[c]) + s[c]) / math.Pi
	}
	if dR == nil {
		return r
	}
	*dR = [3][brdf.MaxParams]float64{}
	for c := 0; c < 3; c++ {
		dd := (1 - s[c]) / math.Pi // dR_c/dd_c
		ds := (1 - d[c]) / math.Pi // dR_c/dF0_c
		if p.Kind == brdf.Dielectric {
			dR[c][c] = dd
			dR[c][3] = ds
		} else {
			dR[c][c] = dd
			dR[c][3+c] = ds
		}
	}
	return r
}

// hasIndirect reports whether indirect rays were cast for the
// observations (Observations.IndSegs; the rays that met a lit neighbour are
// in the ray entries or, for observations made without them, IndK).
func (set *ObservationSet) hasIndirect() bool {
	for _, so := range set.Segments {
		if so.Obs.IndSegs > 0 {
			return true
		}
	}
	return false
}

// estimateAmbient sets every observation's indirect irradiance from its
// factors and the segments' current parameters (params[s], indexed like
// set.Segments). It returns, per segment, the mean share of the indirect
// term in the model's radiance, for the warnings.
func (set *ObservationSet) estimateAmbient(params []brdf.Params) []float64 {
	ns := len(set.Segments)
	alb := make([][3]float64, ns)
	for s := range alb {
		alb[s] = albedoOf(&params[s])
	}
	share := make([]float64, ns)
	for si, so := range set.Segments {
		ob := &so.Obs
		n := ob.Len()
		withRays := len(ob.RayEnd) == n
		withK := len(ob.IndK) == 3*ns*n
		if ob.IndSegs != ns {
			ob.AR, ob.AG, ob.AB = nil, nil, nil
			continue
		}
		if len(ob.AR) != n {
			ob.AR, ob.AG, ob.AB = make([]float32, n), make([]float32, n), make([]float32, n)
		}
		resp := ambientResponse(&params[si], nil)
		// The irradiance every ray entry sends, with its segment's current
		// parameters: pi f_s(wo_y, wi_y) E_y.
		sent := make([][3]float64, len(ob.RaySeg))
		for r, sg := range ob.RaySeg {
			if int(sg) >= ns {
				continue
			}
			wo := brdf.Vec{X: float64(ob.RayWoX[r]), Y: float64(ob.RayWoY[r]), Z: float64(ob.RayWoZ[r])}
			wl := brdf.Vec{X: float64(ob.RayWiX[r]), Y: float64(ob.RayWiY[r]), Z: float64(ob.RayWiZ[r])}
			f := brdf.Eval(&params[sg], wo, wl)
			sent[r] = [3]float64{math.Pi * f[0] * float64(ob.RayER[r]), math.Pi * f[1] * float64(ob.RayEG[r]), math.Pi * f[2] * float64(ob.RayEB[r])}
		}
		for l, r := range ob.LightRay {
			if r >= 0 {
				w := ob.lightWeight(l)
				ob.ER[l], ob.EG[l], ob.EB[l] = float32(w*sent[r][0]), float32(w*sent[r][1]), float32(w*sent[r][2])
			}
		}
		// Every observation's own estimate, then (with rays) the average
		// over its neighbours in the same photo, as poolIndirect does for
		// a metal's directional samples.
		own := make([][3]float64, n)
		if withRays {
			for i := 0; i < n; i++ {
				rs, re := ob.rays(i)
				for r := rs; r < re; r++ {
					for c := 0; c < 3; c++ {
						own[i][c] += sent[r][c]
					}
				}
			}
		}
		sum := 0.0
		for i := 0; i < n; i++ {
			var e [3]float64
			if withRays {
				lo, hi := ob.photoRun(i, poolHalfWidth)
				for k := lo; k < hi; k++ {
					for c := 0; c < 3; c++ {
						e[c] += own[k][c]
					}
				}
				for c := range e {
					e[c] /= float64(hi - lo)
				}
			} else if withK {
				k := ob.IndK[3*ns*i : 3*ns*(i+1)]
				for s := 0; s < ns; s++ {
					for c := 0; c < 3; c++ {
						e[c] += alb[s][c] * float64(k[3*s+c])
					}
				}
			}
			ob.AR[i], ob.AG[i], ob.AB[i] = float32(e[0]), float32(e[1]), float32(e[2])
			direct := directAt(ob, i, &params[si])
			all := samplesAt(ob, i, &params[si], true)
			ind := resp[0]*e[0] + resp[1]*e[1] + resp[2]*e[2]
			ind += all[0] + all[1] + all[2] - direct[0] - direct[1] - direct[2]
			if tot := direct[0] + direct[1] + direct[2] + ind; tot > 0 {
				sum += ind / tot
			}
		}
		if n > 0 {
			share[si] = sum / float64(n)
		}
	}
	return share
}

// indirectFactors casts the cosine-weighted rays of one observation at
// world point p (shading normal ns, geometric normal ng, both facing the
// camera) and writes K[s][c] into k (3 per segment). labelSeg maps the
// mesh's segment labels to the set's segments. The sample is a function of
// (seed, photo, pixel) only.
//
// When rays is not nil, every ray that meets a segment and finds light
// there is also appended to it as a directional sample (local direction,
// segment, irradiance divided by samples), for a metal's lobe-weighted
// indirect term (Observations.LightSeg).
func indirectFactors(p, ns, ng render.Vec3, lights []photoLight, scene *render.Scene, offset float64, labelSeg []int, nseg, samples int, seed uint64, photo, pixel int, k []float32, rays *[]indirectRay) {
	for i := range k {
		k[i] = 0
	}
	if rays != nil {
		*rays = (*rays)[:0]
	}
	var src rand.PCG
	src.Seed(seed^0x9e3779b97f4a7c15, uint64(photo)<<32|uint64(uint32(pixel)))
	rng := rand.New(&src)
	frame := render.NewFrame(ns)
	origin := p.AddScaled(ng, offset)
	inv := 1 / float64(samples)
	var h render.Hit
	for j := 0; j < samples; j++ {
		// Stratified in the first coordinate: one stratum per sample.
		u1 := (float64(j) + rng.Float64()) * inv
		u2 := rng.Float64()
		r := math.Sqrt(u1)
		phi := 2 * math.Pi * u2
		local := brdf.Vec{X: r * math.Cos(phi), Y: r * math.Sin(phi), Z: math.Sqrt(math.Max(0, 1-u1))}
		d := frame.ToWorld(local)
		if d.Dot(ng) <= 0 {
			continue
		}
		if !scene.Intersect(render.Ray{O: origin, D: d}, math.Inf(1), &h) {
			continue
		}
		// The hit must face x: a back face means the ray left through a
		// hole or an open edge of the mesh.
		hn, hs := h.Ng, h.Ns
		if hn.Dot(d) >= 0 {
			continue
		}
		if hs.Dot(d) > 0 {
			hs = hn
		}
		s := 0
		if len(labelSeg) > 0 {
			l := int(h.Segment)
			if l < 0 || l >= len(labelSeg) || labelSeg[l] < 0 {
				continue
			}
			s = labelSeg[l]
		}
		if s >= nseg {
			continue
		}
		yo := h.P.AddScaled(hn, offset)
		var fy render.Frame
		var woY brdf.Vec
		if rays != nil {
			fy = render.NewFrame(hs)
			woY = fy.ToLocal(d.Mul(-1))
		}
		for li := range lights {
			L := &lights[li]
			wi, tmax := L.towards(h.P, offset)
			cos := hs.Dot(wi)
			if cos <= 0 || hn.Dot(wi) <= 0 {
				continue
			}
			if scene.Occluded(render.Ray{O: yo, D: wi}, tmax) {
				continue
			}
			e := L.power
			if L.kind != capture.LightDirectional {
				r2 := L.pos.Sub(h.P).Len2()
				for c := range e {
					e[c] /= r2
				}
			}
			var ey [3]float64
			for c := 0; c < 3; c++ {
				ey[c] = e[c] * cos * inv
				k[3*s+c] += float32(ey[c])
			}
			if rays != nil {
				*rays = append(*rays, indirectRay{dir: local, seg: s, wo: woY, wl: fy.ToLocal(wi), e: ey})
			}
		}
	}
}

// indirectRay is one ray entry (Observations.RayEnd): an indirect ray that
// met segment seg at a point lit by one light.
type indirectRay struct {
	dir    brdf.Vec // the ray, in the local frame of the observed point
	seg    int
	wo, wl brdf.Vec   // towards the observed point and the light, local frame at the hit
	e      [3]float64 // the light's irradiance at the hit / number of rays
}

// looseRelTol is the stop rule of the fits whose albedos only feed the
// next indirect estimate: the estimate is good to tens of percent, so a
// loss converged to 1e-4 is plenty.
const looseRelTol = 1e-4

// metalIndirectSigma refits a metal with its lobe treated as matte for the
// indirect light (ambientResponseMatte), warm-started from sf, and adds
// MetalIndirectFactor times the shift of every parameter to its sigma in
// quadrature (and records it in IndirectSigma). The extra passes are
// counted in SigmaPasses, not in Passes or the loss history.
//
// The model leaves a metal's reflection of indirect light out, but it is
// there: it fattens the far tail of the lobe, which a fit without
// near-specular observations reads as a rougher, darker metal. The refit
// measures how far the parameters move between leaving the term out and
// the matte-lobe estimate of it, which overstates it (a glossy lobe sees
// only what lies near the mirror direction). Run uses it only for a metal
// whose observations carry no directional indirect samples (none of its
// rays met a lit neighbour); otherwise the term is in the model and its
// uncertainty enters through IndirectRelError (SegmentFit.uncertainty).
func metalIndirectSigma(ctx context.Context, so *SegmentObservations, sf *SegmentFit, hold *held, opts Options) error {
	eps := so.Floor
	if opts.NoiseFloor > 0 {
		eps = opts.NoiseFloor
	}
	if eps <= 0 {
		eps = 1e-4
	}
	o := opts
	o.Progress = nil
	o.RelTol = math.Max(o.RelTol, looseRelTol)
	so.Obs.matteMetal = true
	defer func() { so.Obs.matteMetal = false }()
	warm := sf.Params
	alt, err := fitSegment(ctx, &so.Obs, so.Kind, so.Name, 0, 1, eps, "", &warm, hold, o)
	if err != nil {
		return err
	}
	sf.SigmaPasses += alt.Passes
	np := so.Kind.NumParams()
	var a, b, sg [brdf.MaxParams]float64
	sf.Params.Vector(a[:0])
	alt.Params.Vector(b[:0])
	sf.Sigma.Vector(sg[:0])
	for k := 0; k < np; k++ {
		if hold != nil && hold.fixed[k] {
			continue
		}
		sys := MetalIndirectFactor * math.Abs(b[k]-a[k])
		sf.IndirectSigma[k] = sys
		sg[k] = math.Hypot(sg[k], sys)
	}
	sf.Sigma = sigmaParams(so.Kind, sg[:np])
	names := paramNames(so.Kind)
	var loose []string
	for k := 0; k < np; k++ {
		if sf.IndirectSigma[k] > opts.MaxRelativeSigma*math.Max(math.Abs(a[k]), 0.05) {
			loose = append(loose, fmt.Sprintf("%s %.3g ± %.2g", names[k], a[k], sg[k]))
		}
	}
	if len(loose) > 0 {
		sf.Warnings = append(sf.Warnings, fmt.Sprintf(
			"the light this metal reflects from its surroundings (left out of the model) could move its parameters: %s; photos with highlights on it (a light near the mirror direction of a camera) would pin them down",
			joinList(loose)))
	}
	return nil
}

// poolHalfWidth is the half-width of the window of neighbouring
// observations whose indirect rays an observation shares (poolIndirect,
// and the matte estimate's average in estimateAmbient).
const poolHalfWidth = 4
