// Package capture reads, validates and writes Patina's capture project
// format, version 1: a JSON file that names the scanned mesh, the segments of
// its surface, the calibrated cameras, the lights and the photographs, each
// taken by one camera under a known set of lights.
//
// The format (field names are part of Patina's interface):
//
//	{
//	  "patina_capture": 1,
//	  "name": "free text",
//	  "up": "+z",                        // +x -x +y -y +z -z; default +z
//	  "mesh": "mesh/object.ply",         // relative to the capture file
//	  "segments": [{"name": "glaze", "label": 0, "model": "dielectric",
//	                "reference_albedo": [0.18, 0.18, 0.18]}],
//	  "cameras": [{"id": "north", "width": 1600, "height": 1200,
//	               "fx": 1850, "fy": 1850, "cx": 799.5, "cy": 599.5,
//	               "distortion": [0, 0, 0, 0, 0],
//	               "position": [0, -0.6, 0.25],
//	               "rotation": [[1, 0, 0], [0, 0, 1], [0, -1, 0]]}],
//	  "lights": [{"id": "dome-07", "type": "point", "position": [0.3, -0.2, 0.5], "intensity": [1.2, 1.2, 1.1]},
//	             {"id": "far", "type": "directional", "direction": [0, -0.5, 0.87], "irradiance": [3, 3, 3]},
//	             {"id": "soft", "type": "sphere", "position": [0, 0, 1], "intensity": [2, 2, 2], "radius": 0.05}],
//	  "photos": [{"file": "photos/north-07.png", "camera": "north", "lights": ["dome-07"],
//	              "encoding": "srgb", "black_level": 0, "white_level": 1,
//	              "exposure": 1.0, "use": "fit", "mask": "masks/north-07.png"}]
//	}
//
// Load reports every structural problem (JSON syntax with line and column,
// wrong types and missing fields with their JSON path and position);
// Validate reports every semantic problem (files, ids, geometry of the
// cameras, lights, photos and segments). Save writes the file atomically in
// a stable, pretty form.
//
// Conventions (ARCHITECTURE.md): metres, right-handed world; cameras follow
// the computer-vision convention (x right, y down, z forward) with OpenCV's
// pinhole and Brown-Conrady distortion model, pixel (0,0) at the centre of
// the top-left pixel; rotation is camera-to-world, its columns are the camera
// axes in world coordinates.
package capture

import (
	"fmt"
	"math"
	"path/filepath"
	"strings"

	"patina/assets/textpos"
)

// FormatVersion is the capture format version this package reads and writes.
const FormatVersion = 1

// MaxFileSize bounds the size of a capture file read by Load (64 MiB, far
// beyond any real project: a capture of ten thousand photos is about 3 MiB).
const MaxFileSize = 64 << 20

// MaxPhotos bounds the number of photos of a capture. Studio captures have
// hundreds; the fit's observation arrays grow with the count (about 220 KB
// per photo and segment at the default 4000 samples), so ten thousand,
// some 2 GB per segment, is as far as one fit can go. Load refuses a file
// listing more before decoding any photo entry, and Validate a capture
// built in memory.
const MaxPhotos = 10000

// Segment models.
const (
	ModelDielectric = "dielectric" // diffuse colour, one specular F0, roughness
	ModelMetal      = "metal"      // specular colour, roughness, no diffuse
	ModelFree       = "free"       // diffuse colour, specular colour, roughness
)

// Light types.
const (
	LightPoint       = "point"       // position, intensity (W/sr, relative scale)
	LightDirectional = "directional" // direction towards the light, irradiance (W/m^2)
	LightSphere      = "sphere"      // position, intensity, radius (metres)
)

// Photo encodings and uses.
const (
	EncodingSRGB   = "srgb"
	EncodingLinear = "linear"
	UseFit         = "fit"
	UseHoldout     = "holdout"
	UseIgnore      = "ignore"
)

// Capture is one capture project. Path and Dir are not serialised: they
// record where the file was loaded from, so relative paths can be resolved.
type Capture struct {
	Path string `json:"-"` // absolute path of the JSON file
	Dir  string `json:"-"` // its directory

	Version  int `json:"patina_capture"`
	Name     string
	Up       string // "+z" by default
	Mesh     string
	Segments []Segment
	Cameras  []Camera
	Lights   []Light
	Photos   []Photo

	// loadProblems holds the warnings found by Load (unknown fields...),
	// reported again by Validate.
	loadProblems []Problem
	// pos maps a JSON path to the byte offset of its value in the file;
	// lines converts offsets to line and column.
	pos   map[string]int
	lines *textpos.Lines
}

// Segment is a part of the mesh surface with one material. Label matches the
// integer face property "segment" of a PLY mesh; without a label the Name
// matches an OBJ usemtl (or g) name.
type Segment struct {
	Name            string
	Label           *int
	Model           string      // dielectric, metal or free; default dielectric
	ReferenceAlbedo *[3]float64 `json:"reference_albedo,omitempty"`
}

// Camera is one calibrated camera: pinhole intrinsics in pixels,
// Brown-Conrady distortion (k1, k2, p1, p2, k3 in OpenCV's order), camera
// centre in world coordinates and camera-to-world rotation.
type Camera struct {
	ID             string
	Width, Height  int     // pixels
	Fx, Fy, Cx, Cy float64 // pixels; (0,0) is the centre of the top-left pixel
	// Distortion holds k1, k2, p1, p2, k3.
	Distortion [5]float64
	// Position is the camera centre in world coordinates, metres.
	Position [3]float64
	// Rotation is camera-to-world, stored by rows as in the JSON file: its
	// columns are the camera x (right), y (down) and z (forward) axes.
	Rotation [3][3]float64
}

// Axis returns camera axis i (0 = x right, 1 = y down, 2 = z forward) in
// world coordinates: column i of Rotation.
func (c *Camera) Axis(i int) [3]float64 {
	return [3]float64{c.Rotation[0][i], c.Rotation[1][i], c.Rotation[2][i]}
}

// Light is one light source. Point and sphere lights use Position and
// Intensity (radiant intensity per channel in the capture's relative scale);
// a directional light uses Direction (pointing towards the light, any
// non-zero length) and Irradiance. Radius is the sphere's radius in metres.
type Light struct {
	ID         string
	Type       string
	Position   [3]float64
	Intensity  [3]float64
	Direction  [3]float64
	Irradiance [3]float64
	Radius     float64
}

// UnitDirection returns Direction scaled to unit length (zero stays zero).
func (l *Light) UnitDirection() [3]float64 {
	d := l.Direction
	n := math.Sqrt(d[0]*d[0] + d[1]*d[1] + d[2]*d[2])
	if n == 0 {
		return d
	}
	return [3]float64{d[0] / n, d[1] / n, d[2] / n}
}

// Exposure converts a photo's linear pixel values to the capture's radiance
// scale. In the file it is either a number (the multiplier itself, Scale) or
// the camera settings {"shutter_s", "iso", "f_number"}.
type Exposure struct {
	Scale    float64 // the multiplier when given as a number; 0 when given as settings
	ShutterS float64 // exposure time, seconds
	ISO      float64
	FNumber  float64
}

// IsSettings reports whether the exposure was given as camera settings.
func (e Exposure) IsSettings() bool {
	return e.Scale == 0 && (e.ShutterS != 0 || e.ISO != 0 || e.FNumber != 0)
}

// Relative returns the relative photometric exposure t*S/N^2 of camera
// settings (pixel value is proportional to radiance times this), or 1/Scale
// for the numeric form.
func (e Exposure) Relative() float64 {
	if e.IsSettings() {
		return e.ShutterS * e.ISO / (e.FNumber * e.FNumber)
	}
	return 1 / e.Scale
}

// Multiplier returns the factor from a linear pixel value to the capture's
// radiance scale: the number itself, or for camera settings the reciprocal
// of the relative exposure, N^2/(t*S), since a pixel value grows with
// exposure time and sensitivity and falls with the square of the f-number
// (common practice: the photographic exposure equation).
func (e Exposure) Multiplier() float64 {
	if e.IsSettings() {
		return e.FNumber * e.FNumber / (e.ShutterS * e.ISO)
	}
	return e.Scale
}

// Photo is one photograph: which camera took it under which lights, how its
// code values map to linear light, and what it is used for.
type Photo struct {
	File       string
	Camera     string
	Lights     []string
	Encoding   string   // srgb (default) or linear
	BlackLevel float64  // normalised code value, default 0
	WhiteLevel float64  // normalised code value, default 1
	Exposure   Exposure // default 1
	Use        string   // fit (default), holdout or ignore
	Mask       string
}

// Problem is one finding of Load or Validate.
type Problem struct {
	Path     string `json:"path"` // JSON path, like photos[12].camera; empty for the whole file
	Msg      string `json:"message"`
	Severity string `json:"severity"` // "error" or "warning"
	Line     int    `json:"line,omitempty"`
	Col      int    `json:"column,omitempty"`
}

// Severities.
const (
	SevError   = "error"
	SevWarning = "warning"
)

// String formats the problem as "LINE:COL: PATH: MESSAGE".
func (p Problem) String() string {
	var b strings.Builder
	if p.Line > 0 {
		fmt.Fprintf(&b, "%d:%d: ", p.Line, p.Col)
	}
	if p.Path != "" {
		b.WriteString(p.Path)
		b.WriteString(": ")
	}
	b.WriteString(p.Msg)
	return b.String()
}

// Error is returned by Load when the file cannot be read as a capture. It
// holds every problem found, errors and warnings.
type Error struct {
	File     string
	Problems []Problem
}

func (e *Error) Error() string {
	var b strings.Builder
	n := 0
	for _, p := range e.Problems {
		if p.Severity != SevError {
			continue
		}
		if n > 0 {
			b.WriteByte('\n')
		}
		n++
		b.WriteString(e.File)
		b.WriteString(":")
		b.WriteString(p.String())
	}
	if n == 0 {
		return e.File + ": invalid capture"
	}
	return b.String()
}

// Errors counts the problems of severity error.
func Errors(ps []Problem) int {
	n := 0
	for _, p := range ps {
		if p.Severity == SevError {
			n++
		}
	}
	return n
}

// Resolve returns the path of a file named in the capture: relative paths
// (with forward slashes, as in the file) are taken relative to the capture
// file's directory.
func (c *Capture) Resolve(rel string) string {
	p := filepath.FromSlash(rel)
	if filepath.IsAbs(p) || c.Dir == "" {
		return p
	}
	return filepath.Join(c.Dir, p)
}

// CameraByID returns the camera with the given id and its index, or nil, -1.
func (c *Capture) CameraByID(id string) (*Camera, int) {
	for i := range c.Cameras {
		if c.Cameras[i].ID == id {
			return &c.Cameras[i], i
		}
	}
	return nil, -1
}

// LightByID returns the light with the given id and its index, or nil, -1.
func (c *Capture) LightByID(id string) (*Light, int) {
	for i := range c.Lights {
		if c.Lights[i].ID == id {
			return &c.Lights[i], i
		}
	}
	return nil, -1
}

// UpVector returns the declared up axis as a unit vector (+z when unset).
func (c *Capture) UpVector() [3]float64 {
	v, ok := upAxes[c.Up]
	if !ok {
		return [3]float64{0, 0, 1}
	}
	return v
}

var upAxes = map[string][3]float64{
	"+x": {1, 0, 0}, "-x": {-1, 0, 0},
	"+y": {0, 1, 0}, "-y": {0, -1, 0},
	"+z": {0, 0, 1}, "-z": {0, 0, -1},
	"": {0, 0, 1},
}

// PhotosByUse returns the indices of the photos with the given use.
func (c *Capture) PhotosByUse(use string) []int {
	var idx []int
	for i := range c.Photos {
		if c.Photos[i].Use == use {
			idx = append(idx, i)
		}
	}
	return idx
}
