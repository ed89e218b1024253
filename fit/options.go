package fit

import (
	"math"
	"runtime"

	"patina/brdf"
)

// Options tune a fit. The zero value is the documented default for every
// field; a field says its unit.
type Options struct {
	// Optimizer is LM (default), LBFGS or Adam.
	Optimizer Optimizer
	// Samples caps the observations taken per segment from each photo
	// (pixels are drawn stratified over the segment's image area). Default
	// 4000; a negative value takes every trustworthy pixel.
	Samples int
	// Seed fixes the pixel sample; the same seed gives the same result on
	// any number of threads.
	Seed uint64
	// Threads is the number of goroutines for ray casting and the objective;
	// default runtime.GOMAXPROCS(0).
	Threads int

	// MaxPasses limits the passes over a segment's observations (every
	// objective-and-gradient evaluation is one pass), roughness starts
	// included. Default 200.
	MaxPasses int
	// StartPasses is the length of the short run from each roughness start
	// before the best one is continued. Default 5.
	StartPasses int
	// RoughnessStarts are the initial perceptual roughness values tried.
	// Default {0.15, 0.4, 0.75}.
	RoughnessStarts []float64
	// MinRoughness is the lower bound of the fitted perceptual roughness: a
	// narrower lobe than this is not resolved by pixels of a real capture.
	// Default 0.03.
	MinRoughness float64
	// RelTol and AbsTol: a pass whose loss decrease is below
	// RelTol*|loss| + AbsTol makes no progress; Patience such passes (or
	// major iterations for L-BFGS) in a row stop the fit. Defaults 1e-8,
	// 1e-16 and 3.
	RelTol, AbsTol float64
	Patience       int
	// GradTol stops when the largest gradient component (in the optimiser's
	// unconstrained coordinates) falls below it. Default 1e-10.
	GradTol float64

	// Delta is the Charbonnier scale on the log-radiance residual: residuals
	// well below it (relative errors of a few percent) count quadratically,
	// larger ones linearly. Default 0.1.
	Delta float64
	// NoiseFloor is the radiance (capture scale, after exposure) below which
	// a pixel is under-exposed and rejected; it is also the offset eps of
	// the log residual. Default: 0.002 times the photo's exposure multiplier
	// when building observations (about half an 8-bit code value of linear
	// signal), and 1e-4 for observations given directly.
	NoiseFloor float64

	// MinCosine rejects a pixel whose view or light direction makes a
	// cosine below it with the shading normal (back-facing or grazing:
	// normals and registration are least reliable there). Default 0.15
	// (about 81 degrees).
	MinCosine float64
	// BorderPixels rejects pixels within this many pixels of a silhouette or
	// a segment border, where registration error mixes surfaces. Default 2.
	BorderPixels int
	// SaturationLevel is the fraction of full scale at or above which the
	// photo decoder marks a pixel saturated; the decoder's own mask is used
	// (this field only documents the rule for reports). Default 0.98.
	SaturationLevel float64
	// RejectSaturated leaves saturated pixels out of the fit (counted under
	// Rejections.Saturated). By default a saturated pixel is kept and each
	// clipped channel is a censored observation, a lower bound at the clip
	// level (objective.go): clipped highlights then still tell the fit
	// that the lobe is at least that bright there.
	RejectSaturated bool
	// ClipSigma is the scale, in log radiance, of a clipped channel's
	// likelihood (Observations.ClipSigma): about the relative error of one
	// observation. Run uses it for the first fit of each segment and then
	// the scale that fit measured near the clip level (SegmentFit.ClipScale).
	// Default 0.05.
	ClipSigma float64

	// NearSpecularDegrees is the angle between the half vector and the
	// shading normal within which an observation counts as near-specular.
	// Default 5.
	NearSpecularDegrees float64
	// MinNearSpecular is the number of near-specular observations below
	// which specular colour and roughness are reported as not identifiable.
	// Default 50.
	MinNearSpecular int
	// MaxRelativeSigma: a parameter whose one-sigma uncertainty exceeds this
	// fraction of its value (or of 0.05 for values below 0.05, so a near-zero
	// diffuse is not flagged for being near zero) gets a warning. Default 0.25.
	MaxRelativeSigma float64

	// IndirectSamples is the number of cosine-weighted rays per observation
	// that estimate the light reflected onto it by the rest of the mesh
	// (indirect.go). Default 8; a negative value leaves indirect light out
	// (the direct-lighting model alone).
	IndirectSamples int
	// IndirectStages is the number of refits with the indirect term
	// re-estimated from the previous fit's albedos. Default 2.
	IndirectStages int

	// Locks holds parameters of named segments at fixed values (the
	// workbench's "hold at this value", or the materials file's "locked"
	// list): the key is the segment name (FitSegment uses the key ""). A
	// lock naming a segment the capture does not have, or a parameter the
	// segment's model does not have, is an error (*LockError).
	Locks map[string]Lock

	// Progress, when set, is called from the fitting goroutine at each stage
	// and after every pass. It must return quickly; a GUI should hand the
	// value to its own thread.
	Progress func(Progress)
}

func (o Options) withDefaults() Options {
	if o.Optimizer == "" {
		o.Optimizer = LM
	}
	if o.Samples == 0 {
		o.Samples = 4000
	}
	if o.Threads <= 0 {
		o.Threads = runtime.GOMAXPROCS(0)
	}
	if o.MaxPasses <= 0 {
		o.MaxPasses = 200
	}
	if o.IndirectSamples == 0 {
		o.IndirectSamples = 8
	}
	if o.IndirectStages <= 0 {
		o.IndirectStages = 2
	}
	if o.StartPasses <= 0 {
		o.StartPasses = 5
	}
	if len(o.RoughnessStarts) == 0 {
		o.RoughnessStarts = []float64{0.15, 0.4, 0.75}
	}
	if o.MinRoughness <= 0 {
		o.MinRoughness = 0.03
	}
	if o.RelTol <= 0 {
		o.RelTol = 1e-8
	}
	if o.AbsTol <= 0 {
		o.AbsTol = 1e-16
	}
	if o.Patience <= 0 {
		o.Patience = 3
	}
	if o.GradTol <= 0 {
		o.GradTol = 1e-10
	}
	if o.Delta <= 0 {
		o.Delta = 0.1
	}
	if o.MinCosine <= 0 {
		o.MinCosine = 0.15
	}
	if o.BorderPixels == 0 {
		o.BorderPixels = 2
	}
	if o.ClipSigma <= 0 {
		o.ClipSigma = defaultClipSigma
	}
	if o.SaturationLevel <= 0 {
		o.SaturationLevel = 0.98
	}
	if o.NearSpecularDegrees <= 0 {
		o.NearSpecularDegrees = 5
	}
	if o.MinNearSpecular <= 0 {
		o.MinNearSpecular = 50
	}
	if o.MaxRelativeSigma <= 0 {
		o.MaxRelativeSigma = 0.25
	}
	return o
}

func (o *Options) nearSpecularCos() float64 {
	return math.Cos(o.NearSpecularDegrees * math.Pi / 180)
}

// Stage names what a fit is doing when it reports progress.
type Stage string

const (
	StageObservations Stage = "observations" // casting rays and reading photos
	StageScale        Stage = "scale"        // solving the radiometric scale
	StageFit          Stage = "fit"          // minimising one segment's loss
	StageDiagnostics  Stage = "diagnostics"  // uncertainty and residuals
	StageDone         Stage = "done"
)

// Progress is one report of a running fit, shared by the command line's
// progress bar and the workbench's live view.
type Progress struct {
	Stage Stage
	// Fraction is the whole job's completion estimate in [0, 1].
	Fraction float64
	// Photo and Photos count the fitting photos read so far and in all
	// (StageObservations).
	Photo, Photos int
	// Segment indexes the segment being fitted; SegmentName names it;
	// Segments is their number.
	Segment, Segments int
	SegmentName       string
	// Pass is the pass count within the segment's fit, Loss the current loss
	// and Params the parameters at that pass (StageFit).
	Pass   int
	Loss   float64
	Params brdf.Params
}
