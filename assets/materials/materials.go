// Package materials reads, checks and writes Patina's materials file: the
// per-segment reflectance parameters the fit produces and the renderer
// consumes, with their uncertainties and the fit's diagnostics.
//
// The file is JSON (RFC 8259):
//
//	{"patina_materials": 1,
//	 "capture": "capture.json",
//	 "segments": [
//	   {"name": "glaze", "model": "dielectric",
//	    "diffuse": [0.12, 0.31, 0.27], "specular": [0.04, 0.04, 0.04], "roughness": 0.25,
//	    "sigma": {"diffuse": [0.004, 0.006, 0.005], "specular": [0.002, 0.002, 0.002], "roughness": 0.01},
//	    "observations": 182340, "near_specular": 5120, "rmse": 0.011,
//	    "warnings": ["roughness is poorly constrained: few near-specular observations"]}
//	 ],
//	 "fit": {"optimizer": "...", "loss": "...", "passes": 3, "seconds": 41.2,
//	         "photos_used": ["photos/a.png"], "rejections": {"saturated": 1200},
//	         "radiometric_scale": 1.0}}
//
// Diffuse is the Lambertian albedo, specular is F0 (reflectance at normal
// incidence), both linear RGB in [0,1]; roughness is the perceptual
// roughness r in [0,1] (the GGX width is alpha = r^2, glTF 2.0). Readers
// ignore fields they do not know, so later versions can add diagnostics.
package materials

import (
	"fmt"
	"math"
	"strings"

	"patina/brdf"
)

// Version is the value of "patina_materials" this package reads and writes.
const Version = 1

// MaxFileSize is the largest materials file Load reads (bytes).
const MaxFileSize = 64 << 20

// MaxSegments is the largest number of segments accepted.
const MaxSegments = 1 << 16

// File is one materials file. Path is where it was loaded from (not
// serialised).
type File struct {
	Path     string    `json:"-"`
	Version  int       `json:"patina_materials"`
	Capture  string    `json:"capture"` // the capture file, relative to this file's directory
	Segments []Segment `json:"segments"`
	Fit      *FitInfo  `json:"fit,omitempty"`
}

// Segment holds the parameters of one segment of the capture.
type Segment struct {
	Name      string     `json:"name"`  // the capture segment's name
	Model     string     `json:"model"` // "dielectric", "metal" or "free"
	Diffuse   [3]float64 `json:"diffuse"`
	Specular  [3]float64 `json:"specular"`
	Roughness float64    `json:"roughness"`
	// Sigma is the one-standard-deviation uncertainty of each parameter,
	// when the fit could estimate it.
	Sigma *Sigma `json:"sigma,omitempty"`
	// Observations is the number of pixel observations the fit used.
	Observations int `json:"observations,omitempty"`
	// NearSpecular is how many of them lie near the mirror direction of a
	// light, where roughness and F0 are constrained.
	NearSpecular int `json:"near_specular,omitempty"`
	// RMSE is the root-mean-square photometric residual (linear radiance
	// units of the capture) at the solution; nil when not fitted.
	RMSE *float64 `json:"rmse,omitempty"`
	// Warnings are human-readable notes on the fit of this segment.
	Warnings []string `json:"warnings,omitempty"`
	// Locked names the parameters ("diffuse", "specular", "roughness") held
	// at this file's values: a fit that reads the file keeps them and
	// estimates the others. A metal has no diffuse parameter to hold.
	Locked []string `json:"locked,omitempty"`
	// LossHistory is the fit's robust loss after every pass over this
	// segment's observations, in order (for a convergence plot).
	LossHistory []float64 `json:"loss_history,omitempty"`
}

// Lockable parameter names, as Segment.Locked spells them.
var LockableParams = []string{"diffuse", "specular", "roughness"}

// MaxLossHistory is the longest loss history accepted per segment (passes).
const MaxLossHistory = 100000

// Sigma holds standard deviations with the same keys as the parameters.
type Sigma struct {
	Diffuse   [3]float64 `json:"diffuse"`
	Specular  [3]float64 `json:"specular"`
	Roughness float64    `json:"roughness"`
}

// FitInfo records how the fit produced the file.
type FitInfo struct {
	Optimizer string  `json:"optimizer,omitempty"` // method name, e.g. "L-BFGS"
	Loss      string  `json:"loss,omitempty"`      // robust loss, e.g. "huber(0.02)"
	Passes    int     `json:"passes,omitempty"`    // outer passes (re-weighting, outlier rejection)
	Seconds   float64 `json:"seconds,omitempty"`   // wall-clock time
	// PhotosUsed lists the photo files (as the capture names them) that
	// contributed observations.
	PhotosUsed []string `json:"photos_used,omitempty"`
	// Holdout lists the photos kept out of the fit for comparison.
	Holdout []string `json:"holdout,omitempty"`
	// Rejections counts rejected observations by reason ("saturated",
	// "masked", "shadow_edge", "outlier", ...).
	Rejections map[string]int `json:"rejections,omitempty"`
	// RadiometricScale is the global factor between the capture's light
	// units and the photos' radiance that the fit estimated (1 when fixed).
	RadiometricScale float64 `json:"radiometric_scale,omitempty"`
	// Seed is the random seed of the fit, for reproduction.
	Seed uint64 `json:"seed,omitempty"`
	// PatinaVersion is the version of the program that wrote the file.
	PatinaVersion string `json:"patina_version,omitempty"`
	// Created is the time of writing, RFC 3339.
	Created string `json:"created,omitempty"`
}

// Error is a problem with a materials file: the file, the JSON path of the
// offending value (like segments[2].roughness; empty for the whole file)
// and what was expected.
type Error struct {
	File string
	Path string
	Msg  string
}

func (e *Error) Error() string {
	var b strings.Builder
	b.WriteString("materials: ")
	if e.File != "" {
		b.WriteString(e.File)
		b.WriteString(": ")
	}
	if e.Path != "" {
		b.WriteString(e.Path)
		b.WriteString(": ")
	}
	b.WriteString(e.Msg)
	return b.String()
}

// Params converts the segment to reflectance parameters, checking the model
// name and the ranges.
func (s Segment) Params() (brdf.Params, error) {
	k, err := brdf.ParseKind(s.Model)
	if err != nil {
		return brdf.Params{}, &Error{Path: "model", Msg: fmt.Sprintf("unknown model %q; expected \"dielectric\", \"metal\" or \"free\"", s.Model)}
	}
	if err := s.check(); err != nil {
		return brdf.Params{}, err
	}
	p := brdf.Params{Kind: k, Diffuse: brdf.RGB(s.Diffuse), Specular: brdf.RGB(s.Specular), Roughness: s.Roughness}
	if err := p.Validate(); err != nil {
		return brdf.Params{}, &Error{Msg: err.Error()}
	}
	return p, nil
}

// FromParams builds a segment named name from reflectance parameters.
func FromParams(name string, p brdf.Params) Segment {
	return Segment{Name: name, Model: p.Kind.String(), Diffuse: p.Diffuse, Specular: p.Specular, Roughness: p.Roughness}
}

// check verifies value ranges; the error's Path is relative to the segment.
func (s *Segment) check() error {
	in01 := func(v float64) bool { return v >= 0 && v <= 1 }
	for i, v := range s.Diffuse {
		if !in01(v) {
			return &Error{Path: fmt.Sprintf("diffuse[%d]", i), Msg: fmt.Sprintf("%v is out of range; expected an albedo in [0,1]", v)}
		}
	}
	for i, v := range s.Specular {
		if !in01(v) {
			return &Error{Path: fmt.Sprintf("specular[%d]", i), Msg: fmt.Sprintf("%v is out of range; expected F0 in [0,1]", v)}
		}
	}
	if !in01(s.Roughness) {
		return &Error{Path: "roughness", Msg: fmt.Sprintf("%v is out of range; expected a perceptual roughness in [0,1]", s.Roughness)}
	}
	if s.Sigma != nil {
		ok := func(v float64) bool { return v >= 0 && !math.IsInf(v, 1) }
		for i, v := range s.Sigma.Diffuse {
			if !ok(v) {
				return &Error{Path: fmt.Sprintf("sigma.diffuse[%d]", i), Msg: fmt.Sprintf("%v: expected a finite standard deviation >= 0", v)}
			}
		}
		for i, v := range s.Sigma.Specular {
			if !ok(v) {
				return &Error{Path: fmt.Sprintf("sigma.specular[%d]", i), Msg: fmt.Sprintf("%v: expected a finite standard deviation >= 0", v)}
			}
		}
		if !ok(s.Sigma.Roughness) {
			return &Error{Path: "sigma.roughness", Msg: fmt.Sprintf("%v: expected a finite standard deviation >= 0", s.Sigma.Roughness)}
		}
	}
	if s.Observations < 0 || s.NearSpecular < 0 {
		return &Error{Path: "observations", Msg: "counts must be >= 0"}
	}
	if s.RMSE != nil && !(*s.RMSE >= 0 && !math.IsInf(*s.RMSE, 1)) {
		return &Error{Path: "rmse", Msg: fmt.Sprintf("%v: expected a finite value >= 0", *s.RMSE)}
	}
	seen := map[string]bool{}
	for i, name := range s.Locked {
		path := fmt.Sprintf("locked[%d]", i)
		known := false
		for _, k := range LockableParams {
			known = known || k == name
		}
		switch {
		case !known:
			return &Error{Path: path, Msg: fmt.Sprintf("%q is not a parameter; expected \"diffuse\", \"specular\" or \"roughness\"", name)}
		case seen[name]:
			return &Error{Path: path, Msg: fmt.Sprintf("%q is listed twice", name)}
		case name == "diffuse" && s.Model == "metal":
			return &Error{Path: path, Msg: "a metal has no diffuse parameter to hold; expected \"specular\" or \"roughness\""}
		}
		seen[name] = true
	}
	if len(s.LossHistory) > MaxLossHistory {
		return &Error{Path: "loss_history", Msg: fmt.Sprintf("%d entries; at most %d are accepted", len(s.LossHistory), MaxLossHistory)}
	}
	for i, v := range s.LossHistory {
		if !(v >= 0 && !math.IsInf(v, 1)) {
			return &Error{Path: fmt.Sprintf("loss_history[%d]", i), Msg: fmt.Sprintf("%v: expected a finite loss >= 0", v)}
		}
	}
	return nil
}

// Segment returns the segment with the given name, or nil.
func (f *File) Segment(name string) *Segment {
	for i := range f.Segments {
		if f.Segments[i].Name == name {
			return &f.Segments[i]
		}
	}
	return nil
}
