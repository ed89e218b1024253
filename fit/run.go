package fit

import (
	"context"
	"fmt"
	"math"
	"path/filepath"
	"sort"
	"time"

	"patina/assets/capture"
	"patina/assets/materials"
	"patina/brdf"
	"patina/render"
)

// Result is the outcome of a whole fit.
type Result struct {
	Segments   []*SegmentFit
	Photos     []PhotoResidual
	Rejections Rejections
	Scale      Scale
	// PhotosUsed are the indices of the photos that gave observations.
	PhotosUsed []int
	Optimizer  Optimizer
	// Loss describes the robust loss, for the materials file.
	Loss string
	// Passes is the total over segments; Seconds the wall time of Run (or
	// of Fit alone).
	Passes  int
	Seconds float64
	// ObservationSeconds is the part of Seconds spent casting rays and
	// reading photos.
	ObservationSeconds float64
	Seed               uint64
	// Warnings concern the whole capture (calibration, photos).
	Warnings []string
	// Indirect describes the indirect-light term, empty when it was left
	// out (indirect.go).
	Indirect string
	// Clipped counts the saturated pixels kept as candidates with their
	// clipped channels as lower bounds (ObservationSet.Clipped); the
	// segments' Censored say how many were drawn.
	Clipped int
}

// indirectWarnShare is the share of indirect light in a segment's modelled
// radiance above which the fit warns that the result leans on the
// one-bounce estimate.
const indirectWarnShare = 0.15

// PhotoResidual is how well the fitted materials explain one photo.
type PhotoResidual struct {
	Photo        int    // index in the capture
	File         string // as the capture names it
	Observations int
	// Ratio is the photo's radiance over the model's, as a geometric mean
	// over its observations: 1.10 means the photo is 10% brighter than the
	// fitted materials and lights predict (a wrong exposure or light
	// intensity shows up here).
	Ratio float64
	// RMSLog is the root mean square of the log-radiance residual.
	RMSLog float64
	// Outlier marks a photo whose Ratio departs from the others'.
	Outlier bool
}

// Run fits the capture: it builds the observations from its fitting photos,
// solves the radiometric scale, fits every segment and computes the
// diagnostics. Progress goes to opts.Progress; ctx cancels.
func Run(ctx context.Context, c *capture.Capture, opts Options) (*Result, error) {
	start := time.Now()
	set, err := BuildObservations(ctx, c, opts)
	if err != nil {
		return nil, err
	}
	obsSeconds := time.Since(start).Seconds()
	res, err := Fit(ctx, set, opts)
	if err != nil {
		return nil, err
	}
	for i := range res.Photos {
		res.Photos[i].File = c.Photos[res.Photos[i].Photo].File
	}
	for _, p := range res.Photos {
		if p.Outlier {
			res.Warnings = append(res.Warnings, fmt.Sprintf(
				"photo %s: the photo is %+.0f%% off the fitted model (others agree closely): check its exposure and the positions and intensities of its lights (%v)",
				p.File, 100*(p.Ratio-1), c.Photos[p.Photo].Lights))
		}
	}
	res.Seconds = time.Since(start).Seconds()
	res.ObservationSeconds = obsSeconds
	return res, nil
}

// Fit solves the radiometric scale and fits every segment of set.
func Fit(ctx context.Context, set *ObservationSet, opts Options) (*Result, error) {
	start := time.Now()
	opts = opts.withDefaults()
	res := &Result{Rejections: set.Rejections, PhotosUsed: set.PhotosUsed, Optimizer: opts.Optimizer,
		Loss: fmt.Sprintf("charbonnier(%g) on log radiance", opts.Delta), Seed: opts.Seed, Clipped: set.Clipped}
	censored := 0
	for _, so := range set.Segments {
		censored += so.Obs.NumCensored()
	}
	if censored > 0 {
		res.Loss += fmt.Sprintf("; %d observations with clipped channels enter as censored (Tobit) lower bounds", censored)
	}
	if opts.Progress != nil {
		opts.Progress(Progress{Stage: StageScale, Fraction: observationShare, Segments: len(set.Segments)})
	}
	res.Scale = solveScale(set)
	if res.Scale.Solved {
		for _, so := range set.Segments {
			so.Obs.ScaleIrradiance(res.Scale.Value)
		}
	} else {
		res.Warnings = append(res.Warnings, res.Scale.Note)
	}
	n := len(set.Segments)
	holds, err := resolveLocks(set.Segments, opts)
	if err != nil {
		return nil, err
	}
	fits := make([]*SegmentFit, n)
	loose := false // set while a stage only feeds the indirect estimate
	fitOne := func(si int, warm *brdf.Params) error {
		if err := ctx.Err(); err != nil {
			return err
		}
		so := set.Segments[si]
		eps := so.Floor
		if opts.NoiseFloor > 0 {
			eps = opts.NoiseFloor
		}
		if eps <= 0 {
			eps = 1e-4
		}
		o := opts
		if loose {
			o.RelTol = math.Max(o.RelTol, looseRelTol)
		}
		if opts.Progress != nil {
			base := observationShare + (1-observationShare)*float64(si)/float64(n)
			o.Progress = func(p Progress) {
				p.Fraction = base + (1-observationShare)/float64(n)*math.Min(float64(p.Pass)/float64(opts.MaxPasses), 1)
				opts.Progress(p)
			}
		}
		sf, err := fitSegment(ctx, &so.Obs, so.Kind, so.Name, si, n, eps, set.advice(so), warm, holds[si], o)
		if err != nil {
			return err
		}
		if old := fits[si]; old != nil {
			// A refit continues the segment's passes and loss history.
			sf.Passes += old.Passes
			sf.LossHistory = append(old.LossHistory, sf.LossHistory...)
		}
		fits[si] = sf
		return nil
	}
	// stage fits every segment once, from warm[si] when not nil.
	stage := func(warm []*brdf.Params) error {
		// Calibration targets first. The linear solve above treats a target as
		// Lambertian; a real card has a faint specular lobe that biases it by a
		// few percent. So the targets are fitted with the full model, the scale
		// is corrected so that their fitted diffuse colour equals the reference
		// albedo (photos fix only the product of scale and reflectance), and
		// they are fitted again at the corrected scale.
		if res.Scale.Solved {
			for si, so := range set.Segments {
				if so.ReferenceAlbedo != nil {
					if err := fitOne(si, warm[si]); err != nil {
						return err
					}
				}
			}
			// Photos fix s*d and s*F0 together, but a dielectric's diffuse
			// weight depends on F0 too, so one correction is not exact: repeat
			// until the correction is below 1e-4 (two or three rounds).
			for round := 0; round < 5; round++ {
				var num, den float64
				for si, so := range set.Segments {
					if so.ReferenceAlbedo == nil || !fits[si].Fitted {
						continue
					}
					for c := 0; c < 3; c++ {
						num += fits[si].Params.Diffuse[c] * so.ReferenceAlbedo[c]
						den += so.ReferenceAlbedo[c] * so.ReferenceAlbedo[c]
					}
				}
				if den <= 0 || num <= 0 {
					break
				}
				k := num / den
				if math.Abs(k-1) < 1e-4 {
					break
				}
				res.Scale.Value *= k
				res.Scale.Sigma *= k
				for _, so := range set.Segments {
					so.Obs.ScaleIrradiance(k)
				}
				for si, so := range set.Segments {
					if so.ReferenceAlbedo != nil && fits[si].Fitted {
						// Warm start: the reflectances scale by 1/k.
						warm := fits[si].Params
						var v [brdf.MaxParams]float64
						vec := warm.Vector(v[:0])
						for j := range vec[:len(vec)-1] {
							vec[j] /= k
						}
						brdf.ClampVector(vec)
						_ = warm.FromVector(vec)
						if err := fitOne(si, &warm); err != nil {
							return err
						}
					}
				}
			}
			res.Scale.Note = fmt.Sprintf("solved from %s (%d observations): photo radiance = %.5g x capture light units",
				joinList(res.Scale.Targets), res.Scale.Observations, res.Scale.Value)
		}
		for si, so := range set.Segments {
			if !res.Scale.Solved || so.ReferenceAlbedo == nil {
				if err := fitOne(si, warm[si]); err != nil {
					return err
				}
			}
		}
		return nil
	}
	indirect := opts.IndirectSamples > 0 && set.hasIndirect()
	loose = indirect
	if err := stage(make([]*brdf.Params, n)); err != nil {
		return nil, err
	}
	// Indirect light: re-estimated from the fitted albedos and every
	// segment refitted with it, warm-started (indirect.go).
	var share []float64
	if indirect {
		for round := 0; round < opts.IndirectStages; round++ {
			loose = round < opts.IndirectStages-1
			params := make([]brdf.Params, n)
			warm := make([]*brdf.Params, n)
			for si := range fits {
				params[si] = fits[si].Params
				if fits[si].Fitted {
					warm[si] = &params[si]
				}
			}
			share = set.estimateAmbient(params)
			setClipSigma(set, fits)
			if err := stage(warm); err != nil {
				return nil, err
			}
		}
		// A metal's sigma gets the sensitivity to the indirect light it
		// reflects, which the model leaves out.
		for si, so := range set.Segments {
			if so.Kind != brdf.Metal || !fits[si].Fitted || len(so.Obs.AR) != so.Obs.Len() || len(so.Obs.LightRay) > 0 {
				continue // a metal with directional indirect samples has the term in its model
			}
			if err := metalIndirectSigma(ctx, so, fits[si], holds[si], opts); err != nil {
				return nil, err
			}
		}
		res.Indirect = fmt.Sprintf("one-bounce indirect light from the mesh, %d rays per observation pooled over up to %d neighbours, %d refits", opts.IndirectSamples, 2*poolHalfWidth+1, opts.IndirectStages)
		res.Loss += "; model: direct light plus one-bounce indirect light off the mesh"

	}
	for si, so := range set.Segments {
		sf := fits[si]
		if so.ReferenceAlbedo != nil && sf.Fitted {
			ra := *so.ReferenceAlbedo
			worst := 0.0
			for c := 0; c < 3; c++ {
				worst = math.Max(worst, math.Abs(sf.Params.Diffuse[c]-ra[c])/math.Max(ra[c], 1e-3))
			}
			if worst > 0.05 {
				sf.Warnings = append(sf.Warnings, fmt.Sprintf(
					"calibration target fits a diffuse colour %.3f %.3f %.3f, %.0f%% off its reference albedo: its colour differs from the reference (check the reference values, and that it is lit evenly)",
					sf.Params.Diffuse[0], sf.Params.Diffuse[1], sf.Params.Diffuse[2], 100*worst))
			}
		}
		if share != nil && sf.Fitted && share[si] > indirectWarnShare {
			sf.Warnings = append(sf.Warnings, fmt.Sprintf(
				"about %.0f%% of the light this segment reflects reaches it indirectly, from the rest of the object and the card; the fit models one bounce off the neighbours with their fitted reflectance, so its colours depend on that estimate: for a firmer result photograph it on a dark matte base or with lights that reach it directly",
				100*share[si]))
		}
		res.Segments = append(res.Segments, sf)
		res.Passes += sf.Passes
	}
	if opts.Progress != nil {
		opts.Progress(Progress{Stage: StageDiagnostics, Fraction: 1, Segments: n})
	}
	res.Photos = photoResiduals(set, res.Segments)
	res.Seconds = time.Since(start).Seconds()
	if opts.Progress != nil {
		opts.Progress(Progress{Stage: StageDone, Fraction: 1, Segments: n, Pass: res.Passes})
	}
	return res, nil
}

// setClipSigma gives every segment with clipped channels the noise scale
// its last fit measured near the clip level (SegmentFit.ClipScale), as the
// censored likelihood's scale of the next fit: the Tobit model estimates
// that scale with the other parameters (Amemiya 1984), here between
// stages. The estimate is kept within [0.005, 0.5].
func setClipSigma(set *ObservationSet, fits []*SegmentFit) {
	for si, so := range set.Segments {
		if f := fits[si]; f != nil && f.Fitted && f.ClipScale > 0 {
			so.Obs.ClipSigma = clamp(f.ClipScale, 0.005, 0.5)
		}
	}
}

// photoResiduals evaluates every fitted segment's model on its observations
// and gathers the residuals by photo.
func photoResiduals(set *ObservationSet, fits []*SegmentFit) []PhotoResidual {
	type acc struct {
		n, k      int // observations, residuals
		sum, sum2 float64
	}
	by := map[int]*acc{}
	for si, so := range set.Segments {
		f := fits[si]
		if !f.Fitted {
			continue
		}
		ob := &so.Obs
		eps := math.Max(so.Floor, 1e-4)
		for i := 0; i < ob.Len(); i++ {
			m := modelAt(ob, i, &f.Params)
			o := [3]float64{float64(ob.R[i]), float64(ob.G[i]), float64(ob.B[i])}
			a := by[int(ob.Photo[i])]
			if a == nil {
				a = &acc{}
				by[int(ob.Photo[i])] = a
			}
			cm := ob.censored(i)
			for c := 0; c < 3; c++ {
				if cm&(1<<c) != 0 {
					continue // a lower bound: no residual to average
				}
				r := math.Log(math.Max(o[c], 0)+eps) - math.Log(m[c]+eps)
				a.sum += r
				a.sum2 += r * r
				a.k++
			}
			a.n++
		}
	}
	var out []PhotoResidual
	for p, a := range by {
		k := float64(max(a.k, 1))
		out = append(out, PhotoResidual{Photo: p, Observations: a.n, Ratio: math.Exp(a.sum / k),
			RMSLog: math.Sqrt(a.sum2 / k)})
	}
	sort.Slice(out, func(i, j int) bool { return out[i].Photo < out[j].Photo })
	if len(out) >= 3 {
		logs := make([]float64, len(out))
		for i, p := range out {
			logs[i] = math.Log(p.Ratio)
		}
		med := median(logs)
		dev := make([]float64, len(logs))
		for i, l := range logs {
			dev[i] = math.Abs(l - med)
		}
		mad := 1.4826 * median(dev) // consistent with a normal sigma (common practice)
		for i := range out {
			if math.Abs(logs[i]-med) > math.Max(0.05, 4*mad) {
				out[i].Outlier = true
			}
		}
	}
	return out
}

func median(x []float64) float64 {
	s := append([]float64(nil), x...)
	sort.Float64s(s)
	if len(s) == 0 {
		return 0
	}
	if len(s)%2 == 1 {
		return s[len(s)/2]
	}
	return (s[len(s)/2-1] + s[len(s)/2]) / 2
}

// modelAt is the forward model for observation i: direct light plus the
// reflected indirect light when the observations carry it.
func modelAt(ob *Observations, i int, p *brdf.Params) [3]float64 {
	m := samplesAt(ob, i, p, true)
	if len(ob.AR) == ob.Len() && ob.Len() > 0 {
		r := ambientResponseMatte(p, nil, ob.matteMetal)
		m[0] += r[0] * float64(ob.AR[i])
		m[1] += r[1] * float64(ob.AG[i])
		m[2] += r[2] * float64(ob.AB[i])
	}
	return m
}

// directAt is the direct-lighting part of the forward model.
func directAt(ob *Observations, i int, p *brdf.Params) [3]float64 {
	return samplesAt(ob, i, p, false)
}

// samplesAt sums f * E over observation i's light samples, the indirect
// ones (Observations.LightSeg) included when withIndirect is set.
func samplesAt(ob *Observations, i int, p *brdf.Params, withIndirect bool) [3]float64 {
	wo := brdf.Vec{X: float64(ob.WoX[i]), Y: float64(ob.WoY[i]), Z: float64(ob.WoZ[i])}
	s, e := ob.lights(i)
	var m [3]float64
	for l := s; l < e; l++ {
		if !withIndirect && ob.indirectSample(l) {
			continue
		}
		wi := brdf.Vec{X: float64(ob.WiX[l]), Y: float64(ob.WiY[l]), Z: float64(ob.WiZ[l])}
		f := brdf.Eval(p, wo, wi)
		m[0] += f[0] * float64(ob.ER[l])
		m[1] += f[1] * float64(ob.EG[l])
		m[2] += f[2] * float64(ob.EB[l])
	}
	return m
}

// advice says where a light would help the segment show its highlights: in
// the mirror direction, about the segment's mean normal, of the camera that
// sees it most.
func (set *ObservationSet) advice(so *SegmentObservations) string {
	n := so.Obs.Len()
	if n == 0 || set == nil || len(set.cameras) == 0 {
		return ""
	}
	best := 0
	for ci, k := range so.perCamera {
		if k > so.perCamera[best] {
			best = ci
		}
	}
	cam := &set.cameras[best]
	nrm := so.sumNormal.Norm()
	cen := so.sumPos.Mul(1 / float64(n))
	v := render.V3(cam.Position[0], cam.Position[1], cam.Position[2]).Sub(cen)
	dist := v.Len()
	v = v.Norm()
	r := nrm.Mul(2 * nrm.Dot(v)).Sub(v)
	if nrm.Len2() < 0.25 || r.Dot(nrm) <= 0 {
		return fmt.Sprintf("add photos in which a light sits near the mirror direction of camera %q about this segment's surface, so its highlights are seen", cam.ID)
	}
	p := cen.AddScaled(r, dist)
	return fmt.Sprintf("a light near (%.2f, %.2f, %.2f) m, the mirror direction of camera %q about the segment's mean normal, would put a highlight on it; or add camera positions that see the reflections of the existing lights", p.X, p.Y, p.Z, cam.ID)
}

// Materials returns the materials file of the result, to be saved at
// outPath (the capture path inside it is made relative to outPath's
// directory).
func (r *Result) Materials(c *capture.Capture, outPath string) *materials.File {
	f := &materials.File{Version: materials.Version, Capture: c.Path}
	if abs, err := filepath.Abs(outPath); err == nil {
		if rel, err := filepath.Rel(filepath.Dir(abs), c.Path); err == nil {
			f.Capture = filepath.ToSlash(rel)
		}
	}
	for _, s := range r.Segments {
		ms := materials.FromParams(s.Name, s.Params)
		ms.Observations = s.Observations
		ms.NearSpecular = s.NearSpecular
		ms.Warnings = append([]string(nil), s.Warnings...)
		ms.Locked = append([]string(nil), s.Locked...)
		ms.LossHistory = append([]float64(nil), s.LossHistory...)
		if s.Fitted {
			rmse := s.RMSE
			ms.RMSE = &rmse
			sig := &materials.Sigma{Diffuse: s.Sigma.Diffuse, Specular: s.Sigma.Specular, Roughness: s.Sigma.Roughness}
			if finiteSigma(sig) {
				ms.Sigma = sig
			}
		}
		f.Segments = append(f.Segments, ms)
	}
	info := &materials.FitInfo{
		Optimizer: string(r.Optimizer), Loss: r.Loss, Passes: r.Passes, Seconds: r.Seconds,
		Rejections: r.Rejections.Map(), RadiometricScale: r.Scale.Value, Seed: r.Seed,
	}
	for _, pi := range r.PhotosUsed {
		info.PhotosUsed = append(info.PhotosUsed, c.Photos[pi].File)
	}
	for _, pi := range c.PhotosByUse(capture.UseHoldout) {
		info.Holdout = append(info.Holdout, c.Photos[pi].File)
	}
	f.Fit = info
	return f
}

func finiteSigma(s *materials.Sigma) bool {
	for _, v := range append(s.Diffuse[:], append(s.Specular[:], s.Roughness)...) {
		if math.IsInf(v, 0) || math.IsNaN(v) {
			return false
		}
	}
	return true
}
