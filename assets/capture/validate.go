package capture

import (
	"fmt"
	"math"
	"os"
	"sort"
	"strings"

	"patina/assets/mesh"
	"patina/assets/photo"
	"patina/render"
)

// RotationTolerance is the largest deviation of R^T R from the identity (per
// element) and of det R from +1 that Validate accepts.
const RotationTolerance = 1e-6

// Summary is what Check learned about a capture besides its problems: the
// mesh and how its triangles fall into segments.
type Summary struct {
	Mesh       *render.Mesh // nil when the mesh could not be loaded (or was not)
	MeshReport *mesh.Report
	// Segments are the effective segments (the capture's, or the defaults
	// when it lists none) and SegmentTriangles their triangle counts.
	Segments         []Segment
	SegmentTriangles []int
	// Unassigned counts the mesh triangles that belong to no segment.
	Unassigned int
	// Photos counts the photos per use.
	Photos map[string]int
}

// CheckOptions changes what Check looks at. The zero value checks everything.
type CheckOptions struct {
	// SkipFiles skips every check that opens a file (mesh, photos, masks).
	SkipFiles bool
	// DecodePhotos decodes every photo and mask in full (one at a time)
	// instead of reading only their headers, so truncated or corrupt pixel
	// data is found too, and reports heavily saturated photos.
	DecodePhotos bool
}

// SaturationWarning is the fraction of saturated pixels above which Check
// (with DecodePhotos) warns about a photo.
const SaturationWarning = 0.05

// Validate checks the capture's semantics and returns every problem found,
// errors and warnings, including the warnings Load found. It loads the mesh
// and reads every photo's header.
func (c *Capture) Validate() []Problem {
	_, probs := c.Check(CheckOptions{})
	return probs
}

// Check is Validate that also returns the summary (with the loaded mesh,
// so a caller need not load it twice).
func (c *Capture) Check(opt CheckOptions) (*Summary, []Problem) {
	v := &validator{c: c, opt: opt, sum: &Summary{Photos: map[string]int{}}}
	v.probs = append(v.probs, c.loadProblems...)
	v.run()
	sort.SliceStable(v.probs, func(i, j int) bool { return pathLess(v.probs[i].Path, v.probs[j].Path) })
	return v.sum, v.probs
}

// pathLess orders problems by where they are in the file: top-level fields
// in the format's order, array elements by index.
func pathLess(a, b string) bool {
	ra, rb := pathRank(a), pathRank(b)
	if ra != rb {
		return ra < rb
	}
	ia, ib := pathIndex(a), pathIndex(b)
	if ia != ib {
		return ia < ib
	}
	return false
}

var topOrder = []string{"", "patina_capture", "name", "up", "mesh", "segments", "cameras", "lights", "photos"}

func pathRank(p string) int {
	head := p
	if i := strings.IndexAny(p, ".["); i >= 0 {
		head = p[:i]
	}
	for i, t := range topOrder {
		if t == head {
			return i
		}
	}
	return len(topOrder)
}

func pathIndex(p string) int {
	i := strings.IndexByte(p, '[')
	if i < 0 {
		return -1
	}
	n := 0
	for _, ch := range p[i+1:] {
		if ch < '0' || ch > '9' {
			break
		}
		n = n*10 + int(ch-'0')
		if n > 1<<30 {
			break
		}
	}
	return n
}

type validator struct {
	c     *Capture
	opt   CheckOptions
	sum   *Summary
	probs []Problem
}

func (v *validator) add(sev, path, format string, a ...any) {
	p := Problem{Path: path, Msg: fmt.Sprintf(format, a...), Severity: sev}
	if v.c.lines != nil {
		// The position of the value at path, or of its nearest ancestor.
		for q := path; ; {
			if off, ok := v.c.pos[q]; ok {
				p.Line, p.Col = v.c.lines.Pos(off)
				break
			}
			if q == "" {
				break
			}
			q = parentPath(q)
		}
	}
	v.probs = append(v.probs, p)
}

func parentPath(p string) string {
	i := strings.LastIndexAny(p, ".[")
	if i < 0 {
		return ""
	}
	return p[:i]
}

func (v *validator) errf(path, format string, a ...any)  { v.add(SevError, path, format, a...) }
func (v *validator) warnf(path, format string, a ...any) { v.add(SevWarning, path, format, a...) }

func finite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }

func (v *validator) run() {
	c := v.c
	if c.Version != FormatVersion {
		v.errf("patina_capture", "format version %d is not supported; this Patina reads version %d", c.Version, FormatVersion)
	}
	if _, ok := upAxes[c.Up]; !ok { // "" means the default, +z
		v.errf("up", "up axis %q is not one of +x -x +y -y +z -z", c.Up)
	}
	v.segments()
	v.mesh()
	camUsed := v.cameras()
	lightUsed := v.lights()
	v.photos(camUsed, lightUsed)
	for i, used := range camUsed {
		if !used {
			v.warnf(index("cameras", i)+".id", "camera %q takes no photo", c.Cameras[i].ID)
		}
	}
	for i, used := range lightUsed {
		if !used {
			v.warnf(index("lights", i)+".id", "light %q lights no photo", c.Lights[i].ID)
		}
	}
}

func (v *validator) segments() {
	names := map[string]int{}
	labels := map[int]int{}
	for i, s := range v.c.Segments {
		p := index("segments", i)
		if s.Name == "" {
			v.errf(p+".name", "segment name is empty")
		} else if j, dup := names[s.Name]; dup {
			v.errf(p+".name", "segment name %q is already used by segments[%d]", s.Name, j)
		} else {
			names[s.Name] = i
		}
		if s.Label != nil {
			if *s.Label < 0 {
				v.errf(p+".label", "segment label %d is negative; PLY segment labels are non-negative integers", *s.Label)
			} else if j, dup := labels[*s.Label]; dup {
				v.errf(p+".label", "segment label %d is already used by segments[%d]", *s.Label, j)
			} else {
				labels[*s.Label] = i
			}
		}
		switch s.Model {
		case ModelDielectric, ModelMetal, ModelFree:
		default:
			v.errf(p+".model", "unknown model %q; expected dielectric, metal or free%s", s.Model,
				suggestName(s.Model, []string{ModelDielectric, ModelMetal, ModelFree}))
		}
		if a := s.ReferenceAlbedo; a != nil {
			for k, x := range a {
				if !finite(x) || x < 0 || x > 1 {
					v.errf(fmt.Sprintf("%s.reference_albedo[%d]", p, k), "reference albedo %v is outside [0, 1]", x)
				}
			}
			if s.Model == ModelMetal {
				v.errf(p+".reference_albedo", "a metal segment has no diffuse albedo; a reference target is dielectric or free")
			}
		}
	}
}

func (v *validator) mesh() {
	c := v.c
	if c.Mesh == "" {
		v.errf("mesh", "no mesh file given")
		return
	}
	if v.opt.SkipFiles {
		v.sum.Segments = c.Segments
		return
	}
	path := c.Resolve(c.Mesh)
	if !v.regularFile("mesh", c.Mesh, "mesh") {
		v.sum.Segments = c.Segments
		return
	}
	m, rep, err := mesh.Load(path)
	if err != nil {
		v.errf("mesh", "%v", err)
		v.sum.Segments = c.Segments
		return
	}
	v.sum.Mesh, v.sum.MeshReport = m, rep
	if rep != nil {
		for _, w := range rep.Warnings {
			v.warnf("mesh", "%s: %s", c.Mesh, w)
		}
	}
	if m.NumTriangles() == 0 {
		v.errf("mesh", "%s has no triangles", c.Mesh)
	}
	segs := c.EffectiveSegments(m)
	v.sum.Segments = segs
	idx, err := c.SegmentIndex(m)
	if err != nil {
		v.errf("segments", "%v", err)
		return
	}
	perLabel := make([]int, len(m.SegmentLabels))
	for _, s := range m.Segments {
		if int(s) >= 0 && int(s) < len(perLabel) {
			perLabel[s]++
		}
	}
	counts := make([]int, len(segs))
	for li, si := range idx {
		if si < 0 {
			v.sum.Unassigned += perLabel[li]
			if perLabel[li] > 0 {
				v.warnf("segments", "mesh segment %s (%d triangles) matches no capture segment; those triangles are not fitted", describeLabel(m.SegmentLabels[li]), perLabel[li])
			}
			continue
		}
		counts[si] += perLabel[li]
	}
	v.sum.SegmentTriangles = counts
	if len(c.Segments) > 0 {
		var have []string
		for _, l := range m.SegmentLabels {
			have = append(have, describeLabel(l))
		}
		for i, s := range c.Segments {
			if counts[i] == 0 {
				how := fmt.Sprintf("name %q", s.Name)
				if s.Label != nil {
					how = fmt.Sprintf("label %d", *s.Label)
				}
				v.errf(index("segments", i), "segment %q has no triangles: the mesh has no faces with %s (it has %s)", s.Name, how, strings.Join(have, ", "))
			}
		}
	}
}

func describeLabel(l render.SegmentLabel) string {
	if l.Label >= 0 {
		if l.Name != "" {
			return fmt.Sprintf("label %d (%q)", l.Label, l.Name)
		}
		return fmt.Sprintf("label %d", l.Label)
	}
	return fmt.Sprintf("%q", l.Name)
}

// regularFile checks that the file named rel in the capture exists and is
// a regular file (not a directory or a device that would never end).
func (v *validator) regularFile(jsonPath, rel, what string) bool {
	file := v.c.Resolve(rel)
	st, err := os.Stat(file)
	if err != nil {
		if os.IsNotExist(err) {
			v.errf(jsonPath, "%s file %q does not exist (looked for %s)", what, rel, file)
		} else {
			v.errf(jsonPath, "%s file %q: %v", what, rel, err)
		}
		return false
	}
	if !st.Mode().IsRegular() {
		v.errf(jsonPath, "%s file %q is not a regular file (%s)", what, rel, file)
		return false
	}
	return true
}

func (v *validator) cameras() []bool {
	ids := map[string]int{}
	for i := range v.c.Cameras {
		cam := &v.c.Cameras[i]
		p := index("cameras", i)
		v.id(p, "camera", cam.ID, ids, i)
		if cam.Width <= 0 || cam.Height <= 0 {
			v.errf(p, "image size %dx%d: width and height must be positive", cam.Width, cam.Height)
		} else if cam.Width > photo.MaxDimension || cam.Height > photo.MaxDimension || int64(cam.Width)*int64(cam.Height) > photo.MaxPixels {
			v.errf(p, "image size %dx%d is beyond Patina's photo limit (%d pixels, %d per side)", cam.Width, cam.Height, photo.MaxPixels, photo.MaxDimension)
		}
		for _, f := range []struct {
			name string
			val  float64
		}{{"fx", cam.Fx}, {"fy", cam.Fy}} {
			if !(f.val > 0) || !finite(f.val) {
				v.errf(p+"."+f.name, "focal length %s = %v pixels: must be positive", f.name, f.val)
			}
		}
		// Pixel (0,0) is the centre of the top-left pixel, so the image
		// spans [-0.5, width-0.5] x [-0.5, height-0.5].
		if cam.Width > 0 && !(cam.Cx >= -0.5 && cam.Cx <= float64(cam.Width)-0.5) {
			v.errf(p+".cx", "principal point cx = %v lies outside the image (-0.5 to %v for width %d)", cam.Cx, float64(cam.Width)-0.5, cam.Width)
		}
		if cam.Height > 0 && !(cam.Cy >= -0.5 && cam.Cy <= float64(cam.Height)-0.5) {
			v.errf(p+".cy", "principal point cy = %v lies outside the image (-0.5 to %v for height %d)", cam.Cy, float64(cam.Height)-0.5, cam.Height)
		}
		for k, x := range cam.Distortion {
			if !finite(x) {
				v.errf(fmt.Sprintf("%s.distortion[%d]", p, k), "distortion coefficient is not finite")
			}
		}
		for k, x := range cam.Position {
			if !finite(x) {
				v.errf(fmt.Sprintf("%s.position[%d]", p, k), "position is not finite")
			}
		}
		if msg := rotationProblem(cam.Rotation); msg != "" {
			v.errf(p+".rotation", "%s", msg)
		}
	}
	return make([]bool, len(v.c.Cameras))
}

// rotationProblem describes how R fails to be a rotation (orthonormal with
// determinant +1 within RotationTolerance), or returns "".
func rotationProblem(r [3][3]float64) string {
	worst, wi, wj := 0.0, 0, 0
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			// (R^T R)_ij is the dot product of columns i and j.
			s := r[0][i]*r[0][j] + r[1][i]*r[1][j] + r[2][i]*r[2][j]
			if i == j {
				s -= 1
			}
			if d := math.Abs(s); d > worst || math.IsNaN(s) {
				worst, wi, wj = d, i, j
				if math.IsNaN(s) {
					worst = math.Inf(1)
				}
			}
		}
	}
	if worst > RotationTolerance {
		if wi == wj {
			return fmt.Sprintf("rotation is not orthonormal: column %d has length %.9g, expected 1 (tolerance %g)", wi, math.Sqrt(math.Abs(colDot(r, wi, wi))), RotationTolerance)
		}
		return fmt.Sprintf("rotation is not orthonormal: columns %d and %d have dot product %.3g, expected 0 (tolerance %g)", wi, wj, colDot(r, wi, wj), RotationTolerance)
	}
	det := r[0][0]*(r[1][1]*r[2][2]-r[1][2]*r[2][1]) -
		r[0][1]*(r[1][0]*r[2][2]-r[1][2]*r[2][0]) +
		r[0][2]*(r[1][0]*r[2][1]-r[1][1]*r[2][0])
	if math.Abs(det-1) > RotationTolerance {
		return fmt.Sprintf("rotation has determinant %.6g, expected +1 (a reflection, not a rotation: the camera axes must be right-handed, z = x cross y)", det)
	}
	return ""
}

func colDot(r [3][3]float64, i, j int) float64 {
	return r[0][i]*r[0][j] + r[1][i]*r[1][j] + r[2][i]*r[2][j]
}

func (v *validator) id(path, what, id string, ids map[string]int, i int) {
	if id == "" {
		v.errf(path+".id", "%s id is empty", what)
		return
	}
	if j, dup := ids[id]; dup {
		v.errf(path+".id", "%s id %q is already used by the %s at index %d", what, id, what, j)
		return
	}
	ids[id] = i
}

func (v *validator) lights() []bool {
	ids := map[string]int{}
	allDark := len(v.c.Lights) > 0
	for i := range v.c.Lights {
		l := &v.c.Lights[i]
		p := index("lights", i)
		v.id(p, "light", l.ID, ids, i)
		vec := func(name string, x [3]float64, nonNegative bool) {
			for k, c := range x {
				switch {
				case !finite(c):
					v.errf(fmt.Sprintf("%s.%s[%d]", p, name, k), "%s is not finite", name)
				case nonNegative && c < 0:
					v.errf(fmt.Sprintf("%s.%s[%d]", p, name, k), "%s %v is negative; light %s must be non-negative", name, c, name)
				}
			}
		}
		var power [3]float64
		switch l.Type {
		case LightPoint, LightSphere:
			vec("position", l.Position, false)
			vec("intensity", l.Intensity, true)
			power = l.Intensity
			if l.Type == LightSphere && !(l.Radius > 0 && finite(l.Radius)) {
				v.errf(p+".radius", "sphere radius %v m must be positive", l.Radius)
			}
		case LightDirectional:
			vec("direction", l.Direction, false)
			vec("irradiance", l.Irradiance, true)
			power = l.Irradiance
			d := l.Direction
			if d[0] == 0 && d[1] == 0 && d[2] == 0 {
				v.errf(p+".direction", "direction is the zero vector; it must point towards the light")
			}
		default:
			v.errf(p+".type", "unknown light type %q; expected point, directional or sphere%s", l.Type,
				suggestName(l.Type, []string{LightPoint, LightDirectional, LightSphere}))
			allDark = false
			continue
		}
		if power[0] > 0 || power[1] > 0 || power[2] > 0 {
			allDark = false
		}
	}
	if allDark {
		v.errf("lights", "every light has zero intensity")
	}
	return make([]bool, len(v.c.Lights))
}

func (v *validator) photos(camUsed, lightUsed []bool) {
	c := v.c
	if len(c.Photos) > MaxPhotos {
		v.errf("photos", "%d photos; a capture may have at most %d (capture.MaxPhotos)", len(c.Photos), MaxPhotos)
		return
	}
	var camIDs, lightIDs []string
	for _, cam := range c.Cameras {
		camIDs = append(camIDs, cam.ID)
	}
	for _, l := range c.Lights {
		lightIDs = append(lightIDs, l.ID)
	}
	files := map[string]int{}
	numeric, settings := 0, 0
	for i := range c.Photos {
		ph := &c.Photos[i]
		p := index("photos", i)
		switch ph.Use {
		case UseFit, UseHoldout, UseIgnore:
			v.sum.Photos[ph.Use]++
		default:
			v.errf(p+".use", "unknown use %q; expected fit, holdout or ignore%s", ph.Use,
				suggestName(ph.Use, []string{UseFit, UseHoldout, UseIgnore}))
		}
		cam, ci := c.CameraByID(ph.Camera)
		if cam == nil {
			v.errf(p+".camera", "no camera %q%s", ph.Camera, suggestName(ph.Camera, camIDs))
		} else {
			camUsed[ci] = true
		}
		if len(ph.Lights) == 0 && ph.Use != UseIgnore {
			v.errf(p+".lights", "the photo lists no lights; a fit or holdout photo needs the lights that were on")
		}
		seenLight := map[string]bool{}
		for k, id := range ph.Lights {
			lp := fmt.Sprintf("%s.lights[%d]", p, k)
			if seenLight[id] {
				v.errf(lp, "light %q is listed twice", id)
				continue
			}
			seenLight[id] = true
			if _, li := c.LightByID(id); li < 0 {
				v.errf(lp, "no light %q%s", id, suggestName(id, lightIDs))
			} else if ph.Use != UseIgnore {
				lightUsed[li] = true
			}
		}
		switch ph.Encoding {
		case EncodingSRGB, EncodingLinear:
		default:
			v.errf(p+".encoding", "unknown encoding %q; expected srgb or linear%s", ph.Encoding,
				suggestName(ph.Encoding, []string{EncodingSRGB, EncodingLinear}))
		}
		if !(ph.BlackLevel >= 0 && ph.BlackLevel < 1) {
			v.errf(p+".black_level", "black level %v is outside [0, 1) (normalised code values)", ph.BlackLevel)
		}
		if !(ph.WhiteLevel > 0 && ph.WhiteLevel <= 1) {
			v.errf(p+".white_level", "white level %v is outside (0, 1] (normalised code values)", ph.WhiteLevel)
		} else if ph.BlackLevel >= 0 && !(ph.WhiteLevel > ph.BlackLevel) {
			v.errf(p+".white_level", "white level %v is not above the black level %v", ph.WhiteLevel, ph.BlackLevel)
		}
		e := ph.Exposure
		if e.IsSettings() {
			settings++
			for _, s := range []struct {
				name string
				val  float64
			}{{"shutter_s", e.ShutterS}, {"iso", e.ISO}, {"f_number", e.FNumber}} {
				if !(s.val > 0) || !finite(s.val) {
					v.errf(p+".exposure."+s.name, "%s %v must be positive", s.name, s.val)
				}
			}
		} else {
			numeric++
			if !(e.Scale > 0) || !finite(e.Scale) {
				v.errf(p+".exposure", "exposure multiplier %v must be positive", e.Scale)
			}
		}
		if ph.File == "" {
			v.errf(p+".file", "no photo file given")
		} else {
			if j, dup := files[ph.File]; dup {
				v.warnf(p+".file", "the same file as photos[%d]", j)
			} else {
				files[ph.File] = i
			}
			if !v.opt.SkipFiles {
				v.photoFile(p, ph, cam)
			}
		}
	}
	if settings > 0 && numeric > 0 {
		v.warnf("photos", "%d photos give the exposure as camera settings and %d as a number: the two scales are unrelated unless the numbers were derived from the settings", settings, numeric)
	}
	if v.sum.Photos[UseFit] == 0 {
		v.errf("photos", "no photo has use \"fit\"; at least one is needed")
	}
	if v.sum.Photos[UseHoldout] == 0 && v.sum.Photos[UseFit] > 0 {
		v.warnf("photos", "no holdout photo: the fitted materials cannot be compared with a photograph the fit has not seen")
	}
}

func (v *validator) photoFile(p string, ph *Photo, cam *Camera) {
	path := v.c.Resolve(ph.File)
	if v.regularFile(p+".file", ph.File, "photo") {
		info, err := photo.Inspect(path)
		switch {
		case err != nil:
			v.errf(p+".file", "%v", err)
		default:
			if cam != nil && (info.Width != cam.Width || info.Height != cam.Height) {
				v.errf(p+".file", "%s is %dx%d pixels but camera %q is %dx%d", ph.File, info.Width, info.Height, cam.ID, cam.Width, cam.Height)
			}
			if info.Alpha {
				v.warnf(p+".file", "%s has an alpha channel; Patina ignores alpha (use a mask file to exclude pixels)", ph.File)
			}
			if ph.Encoding == EncodingSRGB && info.BitDepth == 16 && info.Format == "tiff" {
				v.warnf(p+".encoding", "%s is a 16-bit TIFF declared as srgb; 16-bit TIFFs from raw converters are often linear", ph.File)
			}
			if v.opt.DecodePhotos {
				v.decodePhoto(p, path, ph)
			}
		}
	}
	if ph.Mask == "" {
		return
	}
	mpath := v.c.Resolve(ph.Mask)
	if !v.regularFile(p+".mask", ph.Mask, "mask") {
		return
	}
	info, err := photo.Inspect(mpath)
	if err != nil {
		v.errf(p+".mask", "%v", err)
		return
	}
	if cam != nil && (info.Width != cam.Width || info.Height != cam.Height) {
		v.errf(p+".mask", "mask %s is %dx%d pixels but camera %q is %dx%d", ph.Mask, info.Width, info.Height, cam.ID, cam.Width, cam.Height)
		return
	}
	if v.opt.DecodePhotos {
		mask, err := photo.LoadMask(mpath, info.Width, info.Height)
		if err != nil {
			v.errf(p+".mask", "%v", err)
			return
		}
		usable := 0
		for _, ok := range mask {
			if ok {
				usable++
			}
		}
		if usable == 0 {
			v.errf(p+".mask", "mask %s marks no pixel usable (white = usable)", ph.Mask)
		}
	}
}

func (v *validator) decodePhoto(p, path string, ph *Photo) {
	d, err := decodingOf(ph)
	if err != nil {
		return // reported by the field checks
	}
	img, err := photo.Load(path, d)
	if err != nil {
		v.errf(p+".file", "%v", err)
		return
	}
	n := 0
	for _, s := range img.Saturated {
		if s {
			n++
		}
	}
	if f := float64(n) / float64(len(img.Saturated)); f > SaturationWarning {
		v.warnf(p+".file", "%s: %.1f%% of the pixels are saturated (a channel at or above %g%% of the white level); they are left out of the fit", ph.File, 100*f, 100*photo.DefaultSaturationThreshold)
	}
}
