package main

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"patina/assets/capture"
	"patina/assets/hdr"
	"patina/assets/mesh"
	"patina/assets/photo"
	"patina/render"
)

// checkResult is what checking one file found: a summary for people (text)
// and for programs (Summary, written by -json), and the problems.
type checkResult struct {
	File     string            `json:"file"`
	Kind     string            `json:"kind"` // capture, mesh, photo, hdr, ...
	Summary  any               `json:"summary,omitempty"`
	Problems []capture.Problem `json:"problems"`
	Errors   int               `json:"errors"`
	Warnings int               `json:"warnings"`
	text     func(w io.Writer) // prints the summary; nil when there is none
}

func (r *checkResult) errorf(path, format string, a ...any) {
	r.Problems = append(r.Problems, capture.Problem{Path: path, Msg: fmt.Sprintf(format, a...), Severity: capture.SevError})
}

func (r *checkResult) warnf(path, format string, a ...any) {
	r.Problems = append(r.Problems, capture.Problem{Path: path, Msg: fmt.Sprintf(format, a...), Severity: capture.SevWarning})
}

// checker checks one file.
type checker func(ctx context.Context, path string, opt checkOptions) *checkResult

type checkOptions struct {
	headersOnly bool
}

// checkersByExt chooses the checker by file extension (lower case).
var checkersByExt = map[string]checker{
	".json": checkJSON,
	".ply":  checkMesh,
	".obj":  checkMesh,
	".png":  checkPhoto,
	".jpg":  checkPhoto,
	".jpeg": checkPhoto,
	".tif":  checkPhoto,
	".tiff": checkPhoto,
	".hdr":  checkHDR,
	".pic":  checkHDR,
	".pfm":  checkHDR,
}

// jsonKinds chooses the checker of a JSON file by the top-level field that
// names its format: Patina's JSON files each start with one
// ("patina_capture": 1, "patina_materials": 1, ...). Files of other
// packages add their row from init. A JSON file with none of these fields
// is checked as a capture, whose checker says what is missing.
var jsonKinds = map[string]checker{
	"patina_capture": checkCapture,
}

func init() {
	register(&command{
		name:    "check",
		summary: "check a capture project or any file Patina reads, and report every problem",
		usage: `patina check FILE [-json] [-headers]

FILE is a capture project (.json), a mesh (.ply, .obj), a photo (.png, .jpg,
.jpeg, .tif, .tiff) or an HDR image (.hdr, .pfm). For a capture it prints the
mesh's triangles and bounds, the segments with their triangle counts, the
cameras, the lights and the photos per use, then every problem with its JSON
path, line and column; every photo and mask is decoded in full.

  -json      print the summary and the problems as one JSON object
  -headers   for a capture, read only the photos' headers (faster)

Exit status: 0 when there are no errors (warnings allowed), 2 when there are.`,
		run: runCheck,
	})
}

func runCheck(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("check", flag.ContinueOnError)
	fs.SetOutput(stderr)
	asJSON := fs.Bool("json", false, "print the result as JSON")
	headers := fs.Bool("headers", false, "read only photo headers")
	fs.Usage = func() { fmt.Fprintln(stderr, commands["check"].usage) }
	files, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(files) != 1 {
		return badInputf("check: expected one FILE, got %d (see 'patina help check')", len(files))
	}
	path := files[0]
	res := checkFile(ctx, path, checkOptions{headersOnly: *headers})
	if err := ctx.Err(); err != nil {
		return err
	}
	for _, p := range res.Problems {
		if p.Severity == capture.SevError {
			res.Errors++
		} else {
			res.Warnings++
		}
	}
	if *asJSON {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		enc.SetEscapeHTML(false)
		if res.Problems == nil {
			res.Problems = []capture.Problem{}
		}
		if err := enc.Encode(res); err != nil {
			return err
		}
	} else {
		if res.text != nil {
			res.text(stdout)
		}
		printProblems(stdout, path, res.Problems)
	}
	if res.Errors > 0 {
		return badInputf("check: %s: %s, %s", path, plural(res.Errors, "error"), plural(res.Warnings, "warning"))
	}
	return nil
}

func plural(n int, what string) string {
	if n == 1 {
		return "1 " + what
	}
	return fmt.Sprintf("%d %ss", n, what)
}

// printProblems lists problems as FILE:LINE:COL: SEVERITY: PATH: MESSAGE.
func printProblems(w io.Writer, file string, probs []capture.Problem) {
	if len(probs) == 0 {
		fmt.Fprintln(w, "no problems found")
		return
	}
	fmt.Fprintf(w, "problems (%d):\n", len(probs))
	for _, p := range probs {
		loc := file
		if p.Line > 0 {
			loc = fmt.Sprintf("%s:%d:%d", file, p.Line, p.Col)
		}
		msg := p.Msg
		if p.Path != "" {
			msg = p.Path + ": " + msg
		}
		// Multi-line messages (a mesh error inside a capture) stay indented.
		msg = strings.ReplaceAll(msg, "\n", "\n    ")
		fmt.Fprintf(w, "%s: %s: %s\n", loc, p.Severity, msg)
	}
}

// checkFile chooses the checker by extension.
func checkFile(ctx context.Context, path string, opt checkOptions) *checkResult {
	ext := strings.ToLower(filepath.Ext(path))
	c, ok := checkersByExt[ext]
	if !ok {
		var exts []string
		for e := range checkersByExt {
			exts = append(exts, e)
		}
		sort.Strings(exts)
		r := &checkResult{File: path, Kind: "unknown"}
		r.errorf("", "cannot tell what kind of file %s is from its extension %q; Patina reads %s", path, filepath.Ext(path), strings.Join(exts, " "))
		return r
	}
	if st, err := os.Stat(path); err != nil {
		r := &checkResult{File: path, Kind: strings.TrimPrefix(ext, ".")}
		r.errorf("", "%v", err)
		return r
	} else if !st.Mode().IsRegular() {
		r := &checkResult{File: path, Kind: strings.TrimPrefix(ext, ".")}
		r.errorf("", "%s is not a regular file", path)
		return r
	}
	return c(ctx, path, opt)
}

// checkJSON sniffs which Patina JSON format the file holds.
func checkJSON(ctx context.Context, path string, opt checkOptions) *checkResult {
	var data []byte
	st, err := os.Stat(path)
	if err == nil && st.Size() <= capture.MaxFileSize {
		data, err = os.ReadFile(path)
	}
	if err == nil && data != nil {
		var top map[string]json.RawMessage
		if json.Unmarshal(data, &top) == nil {
			var kinds []string
			for k := range top {
				if _, ok := jsonKinds[k]; ok {
					kinds = append(kinds, k)
				}
			}
			sort.Strings(kinds)
			if len(kinds) > 1 {
				r := &checkResult{File: path, Kind: "json"}
				r.errorf("", "the file claims several formats at once (%s)", strings.Join(kinds, ", "))
				return r
			}
			if len(kinds) == 1 {
				return jsonKinds[kinds[0]](ctx, path, opt)
			}
		} else if k := claimedKind(data); k != "" {
			// Not valid JSON (a truncated file, say), but it names one
			// format near its start: that format's reader says where the
			// JSON goes wrong, in its own terms.
			return jsonKinds[k](ctx, path, opt)
		}
	}
	return checkCapture(ctx, path, opt)
}

// claimedKind returns the one format field of jsonKinds that appears as a
// key in the first kilobyte of data, where Patina's writers put it, or ""
// when none or several do.
func claimedKind(data []byte) string {
	head := data[:min(len(data), 1024)]
	found := ""
	for k := range jsonKinds {
		if bytes.Contains(head, []byte(strconv.Quote(k)+":")) || bytes.Contains(head, []byte(strconv.Quote(k)+" :")) {
			if found != "" {
				return ""
			}
			found = k
		}
	}
	return found
}

// captureSummary is the -json form of a capture's summary.
type captureSummary struct {
	Name     string           `json:"name"`
	Up       string           `json:"up"`
	Mesh     *meshSummary     `json:"mesh,omitempty"`
	Segments []segmentSummary `json:"segments"`
	Camera   []cameraSummary  `json:"cameras"`
	Lights   []lightSummary   `json:"lights"`
	Photos   map[string]int   `json:"photos"`
}

type segmentSummary struct {
	Name            string      `json:"name"`
	Label           *int        `json:"label,omitempty"`
	Model           string      `json:"model"`
	Triangles       int         `json:"triangles"`
	ReferenceAlbedo *[3]float64 `json:"reference_albedo,omitempty"`
}

type cameraSummary struct {
	ID       string     `json:"id"`
	Width    int        `json:"width"`
	Height   int        `json:"height"`
	Fx       float64    `json:"fx"`
	Fy       float64    `json:"fy"`
	Position [3]float64 `json:"position"`
	Photos   int        `json:"photos"`
}

type lightSummary struct {
	ID     string     `json:"id"`
	Type   string     `json:"type"`
	Where  [3]float64 `json:"position_or_direction"`
	Power  [3]float64 `json:"intensity_or_irradiance"`
	Photos int        `json:"photos"`
}

type meshSummary struct {
	File       string         `json:"file"`
	Format     string         `json:"format"`
	Triangles  int            `json:"triangles"`
	Vertices   int            `json:"vertices"`
	Degenerate int            `json:"degenerate_dropped"`
	BoundsMin  [3]float64     `json:"bounds_min"`
	BoundsMax  [3]float64     `json:"bounds_max"`
	Area       float64        `json:"surface_area_m2"`
	Segments   []labelSummary `json:"segments"`
}

type labelSummary struct {
	Label     int    `json:"label"`
	Name      string `json:"name,omitempty"`
	Triangles int    `json:"triangles"`
}

func summariseMesh(file string, m *render.Mesh, rep *mesh.Report) *meshSummary {
	s := &meshSummary{File: file, Triangles: m.NumTriangles(), Vertices: m.NumVertices(), Area: mesh.SurfaceArea(m)}
	s.BoundsMin, s.BoundsMax = mesh.Bounds(m)
	if rep != nil {
		s.Format, s.Degenerate = rep.Format, rep.Degenerate
	}
	counts := make([]int, len(m.SegmentLabels))
	for _, l := range m.Segments {
		if int(l) >= 0 && int(l) < len(counts) {
			counts[l]++
		}
	}
	for i, l := range m.SegmentLabels {
		s.Segments = append(s.Segments, labelSummary{Label: l.Label, Name: l.Name, Triangles: counts[i]})
	}
	return s
}

func (s *meshSummary) print(w io.Writer, indent string) {
	fmt.Fprintf(w, "%smesh %s: %s, %d triangles, %d vertices", indent, s.File, s.Format, s.Triangles, s.Vertices)
	if s.Degenerate > 0 {
		fmt.Fprintf(w, " (%d degenerate dropped)", s.Degenerate)
	}
	fmt.Fprintln(w)
	fmt.Fprintf(w, "%s  bounds %s to %s m (size %s m), surface area %.4g m^2\n", indent, vec(s.BoundsMin), vec(s.BoundsMax),
		vec([3]float64{s.BoundsMax[0] - s.BoundsMin[0], s.BoundsMax[1] - s.BoundsMin[1], s.BoundsMax[2] - s.BoundsMin[2]}), s.Area)
}

func vec(v [3]float64) string { return fmt.Sprintf("(%.4g, %.4g, %.4g)", v[0], v[1], v[2]) }

func checkCapture(ctx context.Context, path string, opt checkOptions) *checkResult {
	r := &checkResult{File: path, Kind: "capture"}
	c, err := capture.Load(path)
	if err != nil {
		var ce *capture.Error
		if errors.As(err, &ce) {
			r.Problems = ce.Problems
		} else {
			r.errorf("", "%v", err)
		}
		return r
	}
	sum, probs := c.Check(capture.CheckOptions{DecodePhotos: !opt.headersOnly})
	r.Problems = probs
	cs := &captureSummary{Name: c.Name, Up: c.Up, Photos: sum.Photos}
	if sum.Mesh != nil {
		cs.Mesh = summariseMesh(c.Mesh, sum.Mesh, sum.MeshReport)
	}
	for i, s := range sum.Segments {
		ss := segmentSummary{Name: s.Name, Label: s.Label, Model: s.Model, ReferenceAlbedo: s.ReferenceAlbedo, Triangles: -1}
		if i < len(sum.SegmentTriangles) {
			ss.Triangles = sum.SegmentTriangles[i]
		}
		cs.Segments = append(cs.Segments, ss)
	}
	camPhotos := map[string]int{}
	lightPhotos := map[string]int{}
	for _, p := range c.Photos {
		camPhotos[p.Camera]++
		for _, l := range p.Lights {
			lightPhotos[l]++
		}
	}
	for _, cam := range c.Cameras {
		cs.Camera = append(cs.Camera, cameraSummary{ID: cam.ID, Width: cam.Width, Height: cam.Height, Fx: cam.Fx, Fy: cam.Fy, Position: cam.Position, Photos: camPhotos[cam.ID]})
	}
	for _, l := range c.Lights {
		ls := lightSummary{ID: l.ID, Type: l.Type, Where: l.Position, Power: l.Intensity, Photos: lightPhotos[l.ID]}
		if l.Type == capture.LightDirectional {
			ls.Where, ls.Power = l.Direction, l.Irradiance
		}
		cs.Lights = append(cs.Lights, ls)
	}
	r.Summary = cs
	r.text = func(w io.Writer) {
		name := c.Name
		if name == "" {
			name = "(unnamed)"
		}
		fmt.Fprintf(w, "capture %s: %q, format %d, up %s\n", path, name, c.Version, c.Up)
		if cs.Mesh != nil {
			cs.Mesh.print(w, "")
		} else {
			fmt.Fprintf(w, "mesh %s: not loaded (see the problems)\n", c.Mesh)
		}
		fmt.Fprintf(w, "segments (%d):\n", len(cs.Segments))
		for _, s := range cs.Segments {
			label := "no label"
			if s.Label != nil {
				label = fmt.Sprintf("label %d", *s.Label)
			}
			tris := "? triangles"
			if s.Triangles >= 0 {
				tris = plural(s.Triangles, "triangle")
			}
			fmt.Fprintf(w, "  %-16q %-9s %-10s %s", s.Name, label, s.Model, tris)
			if s.ReferenceAlbedo != nil {
				fmt.Fprintf(w, ", reference albedo %s", vec(*s.ReferenceAlbedo))
			}
			fmt.Fprintln(w)
		}
		if sum.Unassigned > 0 {
			fmt.Fprintf(w, "  (%d triangles in no segment)\n", sum.Unassigned)
		}
		fmt.Fprintf(w, "cameras (%d):\n", len(c.Cameras))
		for _, cam := range cs.Camera {
			fmt.Fprintf(w, "  %-12q %dx%d, fx %.6g fy %.6g, at %s m, %s\n", cam.ID, cam.Width, cam.Height, cam.Fx, cam.Fy, vec(cam.Position), plural(cam.Photos, "photo"))
		}
		fmt.Fprintf(w, "lights (%d):\n", len(c.Lights))
		for _, l := range cs.Lights {
			what, where := "intensity", "at"
			unit := "W/sr"
			if l.Type == capture.LightDirectional {
				what, where, unit = "irradiance", "towards", "W/m^2"
			}
			fmt.Fprintf(w, "  %-12q %-11s %s %s, %s %s %s, %s\n", l.ID, l.Type, where, vec(l.Where), what, vec(l.Power), unit, plural(l.Photos, "photo"))
		}
		fmt.Fprintf(w, "photos (%d): %d fit, %d holdout, %d ignore\n", len(c.Photos), sum.Photos[capture.UseFit], sum.Photos[capture.UseHoldout], sum.Photos[capture.UseIgnore])
	}
	return r
}

func checkMesh(_ context.Context, path string, _ checkOptions) *checkResult {
	r := &checkResult{File: path, Kind: "mesh"}
	m, rep, err := mesh.Load(path)
	if err != nil {
		r.errorf("", "%v", err)
		return r
	}
	s := summariseMesh(path, m, rep)
	r.Summary = s
	for _, w := range rep.Warnings {
		r.warnf("", "%s", w)
	}
	if m.NumTriangles() == 0 {
		r.errorf("", "%s has no triangles", path)
	}
	r.text = func(w io.Writer) {
		s.print(w, "")
		fmt.Fprintf(w, "  segments (%d):\n", len(s.Segments))
		for _, l := range s.Segments {
			name := ""
			if l.Name != "" {
				name = fmt.Sprintf(" %q", l.Name)
			}
			if l.Label >= 0 {
				fmt.Fprintf(w, "    label %d%s: %s\n", l.Label, name, plural(l.Triangles, "triangle"))
			} else {
				fmt.Fprintf(w, "   %s: %s\n", name, plural(l.Triangles, "triangle"))
			}
		}
		if rep.ComputedNormals {
			fmt.Fprintln(w, "  normals: computed (angle-weighted), the file has none")
		}
	}
	return r
}

type photoSummary struct {
	photo.Info
	SaturatedFraction float64    `json:"saturated_fraction"`
	MeanSRGBLinear    [3]float64 `json:"mean_linear_assuming_srgb"`
}

func checkPhoto(_ context.Context, path string, _ checkOptions) *checkResult {
	r := &checkResult{File: path, Kind: "photo"}
	info, err := photo.Inspect(path)
	if err != nil {
		r.errorf("", "%v", err)
		return r
	}
	img, err := photo.Load(path, photo.Decoding{})
	if err != nil {
		r.errorf("", "%v", err)
		return r
	}
	s := &photoSummary{Info: info}
	n := 0
	for _, sat := range img.Saturated {
		if sat {
			n++
		}
	}
	s.SaturatedFraction = float64(n) / float64(len(img.Saturated))
	for i, v := range img.Pix {
		s.MeanSRGBLinear[i%3] += float64(v)
	}
	for k := range s.MeanSRGBLinear {
		s.MeanSRGBLinear[k] /= float64(img.Width * img.Height)
	}
	if info.Alpha {
		r.warnf("", "%s has an alpha channel; Patina ignores alpha (use a mask file to exclude pixels)", path)
	}
	r.Summary = s
	r.text = func(w io.Writer) {
		ch := "RGB"
		if info.Channels == 1 {
			ch = "grey"
		}
		if info.Alpha {
			ch += " + alpha (ignored)"
		}
		fmt.Fprintf(w, "photo %s: %s, %dx%d pixels, %d-bit %s\n", path, strings.ToUpper(info.Format), info.Width, info.Height, info.BitDepth, ch)
		fmt.Fprintf(w, "  saturated pixels: %.2f%% (a channel at or above %g%% of full scale)\n", 100*s.SaturatedFraction, 100*photo.DefaultSaturationThreshold)
		fmt.Fprintf(w, "  mean linear value, assuming the sRGB curve: %s\n", vec(s.MeanSRGBLinear))
	}
	return r
}

type hdrSummary struct {
	Width     int        `json:"width"`
	Height    int        `json:"height"`
	Min       [3]float64 `json:"min"`
	Max       [3]float64 `json:"max"`
	Mean      [3]float64 `json:"mean"`
	NonFinite int        `json:"non_finite_samples"`
}

func checkHDR(_ context.Context, path string, _ checkOptions) *checkResult {
	r := &checkResult{File: path, Kind: "hdr"}
	img, err := hdr.ReadFile(path)
	if err != nil {
		r.errorf("", "%v", err)
		return r
	}
	s := &hdrSummary{Width: img.Width, Height: img.Height}
	for k := 0; k < 3; k++ {
		s.Min[k], s.Max[k] = math.Inf(1), math.Inf(-1)
	}
	for i, v := range img.Pix {
		f, k := float64(v), i%3
		if math.IsNaN(f) || math.IsInf(f, 0) {
			s.NonFinite++
			continue
		}
		s.Min[k], s.Max[k] = math.Min(s.Min[k], f), math.Max(s.Max[k], f)
		s.Mean[k] += f
	}
	if n := img.Width * img.Height; n > 0 {
		for k := range s.Mean {
			s.Mean[k] /= float64(n)
		}
	}
	if err := img.CheckFinite(); err != nil {
		r.errorf("", "%s: %v (%d non-finite samples)", path, err, s.NonFinite)
	}
	for i, v := range img.Pix {
		if v < 0 {
			r.warnf("", "%s: pixel (%d, %d) has a negative value %g; radiance is non-negative", path, (i/3)%img.Width, (i/3)/img.Width, v)
			break
		}
	}
	r.Summary = s
	r.text = func(w io.Writer) {
		fmt.Fprintf(w, "HDR image %s: %dx%d pixels, linear RGB\n", path, s.Width, s.Height)
		fmt.Fprintf(w, "  min %s, max %s, mean %s\n", vec(s.Min), vec(s.Max), vec(s.Mean))
	}
	return r
}
