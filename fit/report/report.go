package report

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"sort"
	"time"

	"patina/assets/capture"
	"patina/assets/materials"
	"patina/assets/mesh"
	"patina/fit/metrics"
	"patina/render"
)

// InputError wraps a problem with the report's input files (capture, mesh,
// materials, photos, masks), as opposed to a failure of the computation.
type InputError struct{ Err error }

func (e *InputError) Error() string { return e.Err.Error() }
func (e *InputError) Unwrap() error { return e.Err }

// FormatVersion is the value of "patina_report" in report.json.
const FormatVersion = 1

// Provenance is what the caller knows about the program run that makes the
// report.
type Provenance struct {
	Program  string // "patina"
	Version  string
	Revision string // VCS revision, "unknown" when not recorded
	// CommandLine is the full command line, program name first.
	CommandLine []string
	// Created is the time of the run; the zero value means time.Now().
	Created time.Time
}

// Report is the holdout proof of one materials file against one capture:
// every fact of report.json, and the pictures the HTML page embeds.
type Report struct {
	Format      int             `json:"patina_report"`
	Title       string          `json:"title"`
	Created     string          `json:"created"` // RFC 3339, UTC
	Program     ProgramRecord   `json:"program"`
	CommandLine []string        `json:"command_line"`
	Capture     CaptureRecord   `json:"capture"`
	Materials   MaterialsRecord `json:"materials"`
	Settings    SettingsRecord  `json:"settings"`
	Tolerance   ToleranceRecord `json:"tolerance"`
	Holdouts    []HoldoutRecord `json:"holdouts"`
	Summary     SummaryRecord   `json:"summary"`
	// Inputs are the files read (or named) with their SHA-256.
	Inputs []FileRecord `json:"inputs"`
	// Images are the pictures embedded in the HTML page, each with the
	// SHA-256 of its PNG bytes.
	Images []ImageRecord `json:"images"`
	// Outputs are the files written before report.json (the HTML page),
	// with their SHA-256; WriteFiles fills it in.
	Outputs []FileRecord `json:"outputs"`
	// Seconds is the wall time of Build.
	Seconds float64 `json:"seconds"`

	holdouts []*Holdout
	images   map[string][]byte // name -> PNG
}

// ProgramRecord names the program that made the report.
type ProgramRecord struct {
	Name      string `json:"name"`
	Version   string `json:"version"`
	Revision  string `json:"revision"`
	GoVersion string `json:"go_version"`
	Platform  string `json:"platform"`
}

// CaptureRecord summarises the capture.
type CaptureRecord struct {
	Path      string           `json:"path"`
	Name      string           `json:"name"`
	Up        string           `json:"up"`
	Mesh      string           `json:"mesh"`
	Triangles int              `json:"triangles"`
	Vertices  int              `json:"vertices"`
	Segments  []CaptureSegment `json:"segments"`
	Cameras   []CameraRecord   `json:"cameras"`
	Lights    int              `json:"lights"`
	Photos    map[string]int   `json:"photos"` // count per use
	Holdout   []string         `json:"holdout_photos"`
	// Warnings are the capture check's warnings (errors stop the report).
	Warnings []capture.Problem `json:"warnings,omitempty"`
}

// CaptureSegment is one segment of the capture.
type CaptureSegment struct {
	Name            string      `json:"name"`
	Model           string      `json:"model"`
	Triangles       int         `json:"triangles"`
	ReferenceAlbedo *[3]float64 `json:"reference_albedo,omitempty"`
}

// CameraRecord is one camera of the capture.
type CameraRecord struct {
	ID     string `json:"id"`
	Width  int    `json:"width"`
	Height int    `json:"height"`
}

// MaterialsRecord is the materials file as the report read it.
type MaterialsRecord struct {
	Path     string             `json:"path"`
	Capture  string             `json:"capture"` // as the file names it
	Segments []SegmentRecord    `json:"segments"`
	Fit      *materials.FitInfo `json:"fit,omitempty"`
	Scale    float64            `json:"radiometric_scale_applied"`
	// History says whether the file records the fit's loss per pass.
	HistoryRecorded bool   `json:"history_recorded"`
	HistoryNote     string `json:"history_note"`
}

// SegmentRecord is one segment of the materials file.
type SegmentRecord = materials.Segment

// SettingsRecord are the settings of the renders and metrics.
type SettingsRecord struct {
	SPP        int     `json:"spp"` // 0: chosen per photo by the noise rule
	MinSPP     int     `json:"min_spp"`
	Adaptive   bool    `json:"adaptive"`
	PixelMin   int     `json:"pixel_min_spp,omitempty"`
	SPPRule    string  `json:"spp_rule"`
	MaxSPP     int     `json:"max_spp"`
	NoiseRatio float64 `json:"noise_ratio"`
	MaxDepth   int     `json:"max_depth"`
	Light      string  `json:"light_transport"`
	Seed       uint64  `json:"seed"`
	SeedRule   string  `json:"seed_rule"`
	Pixels     string  `json:"compared_pixels"`
	Peak       string  `json:"peak_rule"`
}

// ToleranceRecord is the tolerance preset the comparisons are judged by.
type ToleranceRecord struct {
	Name    string  `json:"name"`
	MeanMax float64 `json:"mean_max,omitempty"`
	P95Max  float64 `json:"p95_max,omitempty"`
	MaxMax  float64 `json:"max_max,omitempty"`
	Strict  bool    `json:"strict"`
	Source  string  `json:"source"`
}

// HoldoutRecord is the comparison of one holdout photo.
type HoldoutRecord struct {
	Photo          int             `json:"photo"` // index in the capture
	File           string          `json:"file"`
	Camera         string          `json:"camera"`
	Lights         []string        `json:"lights"`
	Width          int             `json:"width"`
	Height         int             `json:"height"`
	Sampling       Sampling        `json:"sampling"`
	MaxDepth       int             `json:"max_depth"`
	Seed           uint64          `json:"seed"`
	RenderSeconds  float64         `json:"render_seconds"`
	CompareSeconds float64         `json:"compare_seconds"`
	Metrics        *metrics.Result `json:"metrics"`
	Verdict        VerdictRecord   `json:"verdict"`
	Images         []string        `json:"images"` // names in Report.Images
}

// VerdictRecord is a metrics.Verdict for JSON.
type VerdictRecord struct {
	Pass     bool                   `json:"pass"`
	Text     string                 `json:"text"`
	Checks   []CheckRecord          `json:"checks"`
	Segments []SegmentVerdictRecord `json:"segments"`
}

// CheckRecord is one statistic against one limit.
type CheckRecord struct {
	Statistic string  `json:"statistic"`
	Value     float64 `json:"value"`
	Limit     float64 `json:"limit"`
	Pass      bool    `json:"pass"`
}

// SegmentVerdictRecord is the verdict on one segment.
type SegmentVerdictRecord struct {
	Index  int           `json:"index"`
	Name   string        `json:"name"`
	Pass   bool          `json:"pass"`
	Checks []CheckRecord `json:"checks"`
}

// SummaryRecord is the overall verdict.
type SummaryRecord struct {
	Pass     bool   `json:"pass"`
	Holdouts int    `json:"holdouts"`
	Passed   int    `json:"passed"`
	Text     string `json:"text"`
}

// FileRecord is one input file.
type FileRecord struct {
	Role   string `json:"role"`
	Path   string `json:"path"`
	Bytes  int64  `json:"bytes"`
	SHA256 string `json:"sha256"`
}

// ImageRecord is one embedded picture.
type ImageRecord struct {
	Name    string `json:"name"`
	Caption string `json:"caption"`
	Width   int    `json:"width"`
	Height  int    `json:"height"`
	Bytes   int    `json:"bytes"`
	SHA256  string `json:"sha256"`
	// Simulation is true when the picture shows a render.
	Simulation bool `json:"simulation"`
}

// Build loads the capture and the materials file, renders and compares
// every holdout photo, and returns the report. Bad input gives errors that
// name the file and the place.
func Build(ctx context.Context, capPath, matPath string, opts Options, prov Provenance) (*Report, error) {
	start := time.Now()
	if err := opts.Check(); err != nil {
		return nil, err
	}
	opts = opts.withDefaults()
	c, err := capture.Load(capPath)
	if err != nil {
		return nil, &InputError{err}
	}
	ps := c.Validate()
	if capture.Errors(ps) > 0 {
		return nil, &InputError{&capture.Error{File: capPath, Problems: ps}}
	}
	meshPath := c.Resolve(c.Mesh)
	m, mrep, err := mesh.Load(meshPath)
	if err != nil {
		return nil, &InputError{err}
	}
	mf, err := materials.Load(matPath)
	if err != nil {
		return nil, &InputError{err}
	}
	setup, err := NewSetup(c, m, mf, opts.Threads)
	if err != nil {
		return nil, &InputError{err}
	}
	holdouts := c.PhotosByUse(capture.UseHoldout)
	if len(holdouts) == 0 {
		return nil, &InputError{&capture.Error{File: c.Path, Problems: []capture.Problem{{Path: "photos", Severity: capture.SevError,
			Msg: fmt.Sprintf("no photo has use %q: there is nothing to prove the materials against (mark one or more photos the fit did not use as holdout)", capture.UseHoldout)}}}}
	}

	created := prov.Created
	if created.IsZero() {
		created = time.Now()
	}
	name := c.Name
	if name == "" {
		name = filepath.Base(c.Path)
	}
	r := &Report{
		Format:  FormatVersion,
		Title:   "Patina \u2014 appearance record: " + name,
		Created: created.UTC().Format(time.RFC3339),
		Program: ProgramRecord{Name: prov.Program, Version: prov.Version, Revision: prov.Revision,
			GoVersion: runtime.Version(), Platform: runtime.GOOS + "/" + runtime.GOARCH},
		CommandLine: prov.CommandLine,
		images:      map[string][]byte{},
	}
	if r.Program.Name == "" {
		r.Program.Name = "patina"
	}
	r.Capture = captureRecord(c, m, mrep, ps, holdouts)
	r.Materials = MaterialsRecord{Path: absPath(mf.Path), Capture: mf.Capture, Segments: mf.Segments, Fit: mf.Fit,
		Scale: setup.Scale, HistoryRecorded: hasHistory(mf.Segments),
		HistoryNote: "The materials file records the fit's outcome (passes, final residual per segment, rejection counts) but not its loss after each pass, so no convergence curve can be drawn from it; the charts show what the file records."}
	if r.Materials.HistoryRecorded {
		r.Materials.HistoryNote = "The convergence chart draws the loss after every pass of the fit as the materials file records it (loss_history per segment)."
	}
	r.Settings = SettingsRecord{SPP: opts.SPP, MinSPP: opts.MinSPP, MaxSPP: opts.MaxSPP, NoiseRatio: opts.NoiseRatio,
		Adaptive: opts.SPP == 0 && !opts.Uniform,
		MaxDepth: opts.MaxDepth, Seed: opts.Seed,
		Light:    fmt.Sprintf("path tracing, direct and indirect light, at most %d scattering events, the photo's lights only, no environment", opts.MaxDepth),
		SeedRule: "holdout photo k (0-based, in capture order) is rendered with seed + k",
		Pixels:   "pixels whose centre ray hits the mesh, inside the photo's mask, with no saturated channel; only pixels within one pixel of a mesh hit are path-traced, the rest are left black",
		Peak:     "linear white = 99.9th percentile of max(R,G,B) over the photo's compared pixels (PSNR peak, sRGB 1.0, CIELAB white)",
	}
	if r.Settings.Adaptive {
		r.Settings.PixelMin = opts.PixelMinSPP
	}
	if opts.SPP == 0 {
		r.Settings.SPPRule = fmt.Sprintf("automatic: the smallest N with s^2(n) / N <= (%.2g sigma_p)^2 samples per pixel, within %d..%d, s^2(n) the median over the compared pixels away from edges of a pixel's error variance at n samples times n, n the largest of %v at most N (measured by a pilot of %d independent renders of %d samples of up to %d of those pixels spread over the view, from the spread of each pixel's %d means after n samples, divided by the chi-square median ratio for %d degrees of freedom), sigma_p the photo's noise over the same pixels (Immerkaer's operator, median form)",
			opts.NoiseRatio, opts.MinSPP, opts.MaxSPP, PilotCounts, PilotReplicates, PilotSPP, PilotPixels, PilotReplicates, PilotReplicates-1)
		if !opts.Uniform {
			r.Settings.SPPRule += fmt.Sprintf("; adaptive: N is each pixel's most, and a pixel stops after at least %d samples once its own sample variance over its samples (or, if larger, the mean of its 3x3 neighbourhood's) is below (%.2g sigma_p)^2, decided between passes", opts.PixelMinSPP, opts.NoiseRatio)
		}
	} else {
		r.Settings.SPPRule = fmt.Sprintf("fixed: %d samples per pixel", opts.SPP)
	}
	t := opts.Tolerance
	r.Tolerance = ToleranceRecord{Name: t.Name, MeanMax: t.MeanMax, P95Max: t.P95Max, MaxMax: t.MaxMax, Strict: t.Strict, Source: t.Source}

	for k, pi := range holdouts {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		ho, err := setup.CompareHoldout(ctx, pi, k, len(holdouts), opts)
		if err != nil {
			return nil, err
		}
		r.holdouts = append(r.holdouts, ho)
		rec := HoldoutRecord{Photo: pi, File: ho.File, Camera: ho.Camera, Lights: ho.Lights, Width: ho.Width, Height: ho.Height,
			Sampling: ho.Sampler, MaxDepth: ho.MaxDepth, Seed: ho.Seed, RenderSeconds: ho.RenderSeconds,
			CompareSeconds: ho.CompareSeconds, Metrics: ho.Result, Verdict: verdictRecord(ho.Verdict)}
		if err := r.addHoldoutImages(k, &rec, ho); err != nil {
			return nil, err
		}
		// The pictures are kept as PNG; the float buffers can go.
		ho.Render, ho.PhotoPix, ho.Valid, ho.Maps = nil, nil, nil, nil
		r.Holdouts = append(r.Holdouts, rec)
	}
	passed := 0
	for _, h := range r.Holdouts {
		if h.Verdict.Pass {
			passed++
		}
	}
	r.Summary = SummaryRecord{Pass: passed == len(r.Holdouts), Holdouts: len(r.Holdouts), Passed: passed}
	word := "PASS"
	if !r.Summary.Pass {
		word = "FAIL"
	}
	verb := "held-out photos agree"
	if len(r.Holdouts) == 1 {
		verb = "held-out photo agrees"
	}
	r.Summary.Text = fmt.Sprintf("%s against %s: %d of %d %s with the simulation within the tolerance (%s)",
		word, t.Name, passed, len(r.Holdouts), verb, t.Source)

	if err := r.addPlots(); err != nil {
		return nil, err
	}
	if r.Inputs, err = inputRecords(c, meshPath, mf.Path, holdouts); err != nil {
		return nil, &InputError{err}
	}
	r.Seconds = time.Since(start).Seconds()
	return r, nil
}

func absPath(p string) string {
	if a, err := filepath.Abs(p); err == nil {
		return a
	}
	return p
}

func captureRecord(c *capture.Capture, m *render.Mesh, mrep *mesh.Report, ps []capture.Problem, holdouts []int) CaptureRecord {
	r := CaptureRecord{Path: c.Path, Name: c.Name, Up: c.Up, Mesh: c.Mesh, Triangles: len(m.Indices) / 3,
		Vertices: len(m.Positions) / 3, Lights: len(c.Lights), Photos: map[string]int{}}
	if r.Up == "" {
		r.Up = "+z"
	}
	if mrep != nil {
		r.Triangles, r.Vertices = mrep.Triangles, mrep.Vertices
	}
	segs := c.EffectiveSegments(m)
	counts := make([]int, len(segs))
	if ts, err := c.TriangleSegments(m); err == nil {
		for _, s := range ts {
			if s >= 0 && int(s) < len(counts) {
				counts[s]++
			}
		}
	}
	for i, s := range segs {
		model := s.Model
		if model == "" {
			model = capture.ModelDielectric
		}
		r.Segments = append(r.Segments, CaptureSegment{Name: s.Name, Model: model, Triangles: counts[i], ReferenceAlbedo: s.ReferenceAlbedo})
	}
	for _, cam := range c.Cameras {
		r.Cameras = append(r.Cameras, CameraRecord{ID: cam.ID, Width: cam.Width, Height: cam.Height})
	}
	for _, p := range c.Photos {
		u := p.Use
		if u == "" {
			u = capture.UseFit
		}
		r.Photos[u]++
	}
	for _, pi := range holdouts {
		r.Holdout = append(r.Holdout, c.Photos[pi].File)
	}
	for _, p := range ps {
		if p.Severity == capture.SevWarning {
			r.Warnings = append(r.Warnings, p)
		}
	}
	return r
}

func verdictRecord(v metrics.Verdict) VerdictRecord {
	conv := func(cs []metrics.Check) []CheckRecord {
		out := make([]CheckRecord, 0, len(cs))
		for _, c := range cs {
			out = append(out, CheckRecord{Statistic: c.Statistic, Value: c.Value, Limit: c.Limit, Pass: c.Pass})
		}
		return out
	}
	r := VerdictRecord{Pass: v.Pass, Text: v.String(), Checks: conv(v.Checks)}
	for _, s := range v.Segments {
		r.Segments = append(r.Segments, SegmentVerdictRecord{Index: s.Index, Name: s.Name, Pass: s.Pass, Checks: conv(s.Checks)})
	}
	return r
}

// inputRecords hashes the capture, the mesh, the materials file and every
// photo and mask the capture names.
func inputRecords(c *capture.Capture, meshPath, matPath string, holdouts []int) ([]FileRecord, error) {
	isHold := map[int]bool{}
	for _, pi := range holdouts {
		isHold[pi] = true
	}
	var out []FileRecord
	seen := map[string]bool{}
	add := func(role, path string) error {
		path = absPath(path)
		if seen[path] {
			return nil
		}
		seen[path] = true
		sum, n, err := hashFile(path)
		if err != nil {
			return err
		}
		out = append(out, FileRecord{Role: role, Path: path, Bytes: n, SHA256: sum})
		return nil
	}
	if err := add("capture", c.Path); err != nil {
		return nil, err
	}
	if err := add("mesh", meshPath); err != nil {
		return nil, err
	}
	if err := add("materials", matPath); err != nil {
		return nil, err
	}
	for i, p := range c.Photos {
		role := "photo (" + p.Use + ", not read by the report)"
		if p.Use == "" {
			role = "photo (fit, not read by the report)"
		}
		if isHold[i] {
			role = "photo (holdout, compared)"
		}
		if err := add(role, c.Resolve(p.File)); err != nil {
			return nil, err
		}
		if p.Mask != "" {
			mrole := "mask (not read by the report)"
			if isHold[i] {
				mrole = "mask (holdout)"
			}
			if err := add(mrole, c.Resolve(p.Mask)); err != nil {
				return nil, err
			}
		}
	}
	return out, nil
}

// hashFile returns the SHA-256 (hex) and size of a file.
func hashFile(path string) (string, int64, error) {
	f, err := os.Open(path)
	if err != nil {
		return "", 0, err
	}
	defer f.Close()
	h := sha256.New()
	n, err := io.Copy(h, f)
	if err != nil {
		return "", 0, fmt.Errorf("%s: %w", path, err)
	}
	return hex.EncodeToString(h.Sum(nil)), n, nil
}

func sha256Hex(b []byte) string {
	s := sha256.Sum256(b)
	return hex.EncodeToString(s[:])
}

// Holdout returns the full comparison of holdout k (with its metrics; the
// pixel buffers are released once the pictures are made).
func (r *Report) Holdout(k int) *Holdout { return r.holdouts[k] }

// Image returns the PNG bytes of the embedded picture called name.
func (r *Report) Image(name string) ([]byte, bool) {
	b, ok := r.images[name]
	return b, ok
}

func sortedKeys(m map[string]int) []string {
	ks := make([]string, 0, len(m))
	for k := range m {
		ks = append(ks, k)
	}
	sort.Strings(ks)
	return ks
}
