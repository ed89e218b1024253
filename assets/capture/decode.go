package capture

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"patina/assets/textpos"
)

// Load reads and parses a capture file. A file that is not valid JSON, or
// whose values have the wrong types or miss required fields, gives an
// *Error holding every such problem with its JSON path, line and column.
// Semantic checks are Validate's.
func Load(path string) (*Capture, error) {
	abs, err := filepath.Abs(path)
	if err != nil {
		return nil, err
	}
	f, err := os.Open(abs)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return nil, err
	}
	if !st.Mode().IsRegular() {
		return nil, fmt.Errorf("%s: not a regular file", path)
	}
	if st.Size() > MaxFileSize {
		return nil, &Error{File: path, Problems: []Problem{{Msg: fmt.Sprintf("file is %d bytes; a capture file may have at most %d", st.Size(), MaxFileSize), Severity: SevError}}}
	}
	data, err := io.ReadAll(io.LimitReader(f, MaxFileSize+1))
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	c, err := Parse(data, abs)
	var ce *Error
	if errors.As(err, &ce) {
		ce.File = path // as the user named it
	}
	return c, err
}

// Parse parses the bytes of a capture file; path (made absolute) is recorded
// as the capture's location for resolving relative paths.
func Parse(data []byte, path string) (*Capture, error) {
	if abs, err := filepath.Abs(path); err == nil {
		path = abs
	}
	if len(data) > MaxFileSize {
		return nil, &Error{File: path, Problems: []Problem{{Msg: fmt.Sprintf("file is %d bytes; a capture file may have at most %d", len(data), MaxFileSize), Severity: SevError}}}
	}
	// A byte-order mark, as some editors write, is not part of the JSON.
	data = bytes.TrimPrefix(data, []byte("\xef\xbb\xbf"))
	li := textpos.NewLines(data)
	root, err := parseTree(data)
	if err != nil {
		var se *syntaxError
		if !errors.As(err, &se) {
			return nil, fmt.Errorf("%s: %w", path, err)
		}
		line, col := li.Pos(se.off)
		return nil, &Error{File: path, Problems: []Problem{{Msg: "JSON syntax error: " + se.msg, Severity: SevError, Line: line, Col: col}}}
	}
	d := &decoder{lines: li, pos: map[string]int{}}
	c := &Capture{Path: path, Dir: filepath.Dir(path), pos: d.pos, lines: li}
	d.capture(root, c)
	c.loadProblems = d.probs
	if Errors(d.probs) > 0 {
		return nil, &Error{File: path, Problems: d.probs}
	}
	return c, nil
}

// decoder turns the parsed tree into a Capture, collecting every problem.
type decoder struct {
	probs []Problem
	lines *textpos.Lines
	pos   map[string]int
}

func (d *decoder) add(sev string, n *node, path, format string, a ...any) {
	p := Problem{Path: path, Msg: fmt.Sprintf(format, a...), Severity: sev}
	if n != nil {
		p.Line, p.Col = d.lines.Pos(n.off)
	}
	d.probs = append(d.probs, p)
}

func (d *decoder) errf(n *node, path, format string, a ...any) {
	d.add(SevError, n, path, format, a...)
}

func (d *decoder) warnf(n *node, path, format string, a ...any) {
	d.add(SevWarning, n, path, format, a...)
}

func (d *decoder) typeErr(n *node, path, want string) {
	d.errf(n, path, "expected %s, got %s", want, n.describe())
}

func join(path, key string) string {
	if path == "" {
		return key
	}
	return path + "." + key
}

func index(path string, i int) string { return path + "[" + strconv.Itoa(i) + "]" }

// field describes one member of a JSON object.
type field struct {
	name     string
	required bool
	set      func(n *node, path string)
}

// object walks an object's members: known ones go to their setters,
// unknown ones give a warning with a suggestion, duplicates and missing
// required members give errors. It returns the names present.
func (d *decoder) object(n *node, path, what string, fields []field) map[string]*node {
	if n.kind != kObject {
		d.typeErr(n, path, "an object ("+what+")")
		return nil
	}
	seen := map[string]*node{}
	names := make([]string, len(fields))
	for i, f := range fields {
		names[i] = f.name
	}
	for i, key := range n.keys {
		v := n.vals[i]
		p := join(path, key)
		if _, dup := seen[key]; dup {
			d.errf(v, p, "field %q appears twice", key)
			continue
		}
		seen[key] = v
		d.pos[p] = v.off
		found := false
		for _, f := range fields {
			if f.name == key {
				found = true
				if v.kind == kNull && !f.required {
					break // null means "not given" for optional fields
				}
				f.set(v, p)
				break
			}
		}
		if !found {
			d.warnf(v, p, "unknown field %q in %s%s (ignored)", key, what, suggestName(key, names))
		}
	}
	for _, f := range fields {
		if v, ok := seen[f.name]; f.required && (!ok || v.kind == kNull) {
			d.errf(n, path, "%s has no %q (required)", what, f.name)
		}
	}
	return seen
}

func (d *decoder) str(dst *string) func(*node, string) {
	return func(n *node, path string) {
		if n.kind != kString {
			d.typeErr(n, path, "a string")
			return
		}
		*dst = n.str
	}
}

func (d *decoder) number(n *node, path string) (float64, bool) {
	if n.kind != kNumber {
		d.typeErr(n, path, "a number")
		return 0, false
	}
	v, err := strconv.ParseFloat(n.str, 64)
	if err != nil || math.IsInf(v, 0) {
		d.errf(n, path, "number %s is out of range", n.str)
		return 0, false
	}
	return v, true
}

func (d *decoder) float(dst *float64) func(*node, string) {
	return func(n *node, path string) {
		if v, ok := d.number(n, path); ok {
			*dst = v
		}
	}
}

// maxInt bounds the integers of a capture (dimensions, labels, version).
const maxInt = 1 << 31

func (d *decoder) integer(dst *int) func(*node, string) {
	return func(n *node, path string) {
		v, ok := d.number(n, path)
		if !ok {
			return
		}
		if v != math.Trunc(v) || math.Abs(v) >= maxInt {
			d.errf(n, path, "expected an integer, got %s", n.str)
			return
		}
		*dst = int(v)
	}
}

// vector reads an array of exactly len(dst) numbers.
func (d *decoder) vector(dst []float64, what string) func(*node, string) {
	return func(n *node, path string) {
		if n.kind != kArray {
			d.typeErr(n, path, fmt.Sprintf("an array of %d numbers (%s)", len(dst), what))
			return
		}
		if len(n.arr) != len(dst) {
			d.errf(n, path, "expected %d numbers (%s), got %d", len(dst), what, len(n.arr))
			return
		}
		for i, v := range n.arr {
			d.pos[index(path, i)] = v.off
			if x, ok := d.number(v, index(path, i)); ok {
				dst[i] = x
			}
		}
	}
}

func (d *decoder) array(n *node, path, what string, each func(i int, v *node, p string)) {
	if n.kind != kArray {
		d.typeErr(n, path, "an array of "+what)
		return
	}
	for i, v := range n.arr {
		p := index(path, i)
		d.pos[p] = v.off
		each(i, v, p)
	}
}

func (d *decoder) capture(n *node, c *Capture) {
	c.Up = "+z"
	c.Version = -1
	d.pos[""] = n.off
	seen := d.object(n, "", "the capture", []field{
		{"patina_capture", true, func(v *node, p string) {
			if v.kind != kNumber {
				d.typeErr(v, p, "the format version number 1")
				return
			}
			d.integer(&c.Version)(v, p)
			if c.Version != FormatVersion && c.Version != -1 {
				d.errf(v, p, "format version %d is not supported; this Patina reads version %d", c.Version, FormatVersion)
			}
		}},
		{"name", false, d.str(&c.Name)},
		{"up", false, d.str(&c.Up)},
		{"mesh", true, d.str(&c.Mesh)},
		{"segments", false, func(v *node, p string) {
			d.array(v, p, "segments", func(_ int, e *node, ep string) {
				var s Segment
				d.segment(e, ep, &s)
				c.Segments = append(c.Segments, s)
			})
		}},
		{"cameras", true, func(v *node, p string) {
			d.array(v, p, "cameras", func(_ int, e *node, ep string) {
				var cam Camera
				d.camera(e, ep, &cam)
				c.Cameras = append(c.Cameras, cam)
			})
		}},
		{"lights", true, func(v *node, p string) {
			d.array(v, p, "lights", func(_ int, e *node, ep string) {
				var l Light
				d.light(e, ep, &l)
				c.Lights = append(c.Lights, l)
			})
		}},
		{"photos", true, func(v *node, p string) {
			if v.kind == kArray && len(v.arr) > MaxPhotos {
				d.errf(v, p, "%d photos; a capture may have at most %d (capture.MaxPhotos)", len(v.arr), MaxPhotos)
				return
			}
			d.array(v, p, "photos", func(_ int, e *node, ep string) {
				var ph Photo
				d.photo(e, ep, &ph)
				c.Photos = append(c.Photos, ph)
			})
		}},
	})
	if seen == nil {
		return
	}
	if _, ok := seen["patina_capture"]; !ok {
		// Say first what the file is not, before the list of details.
		for i, p := range d.probs {
			if p.Path == "" && strings.Contains(p.Msg, `"patina_capture"`) {
				copy(d.probs[1:i+1], d.probs[:i])
				d.probs[0] = p
				break
			}
		}
	}
	if c.Version == -1 {
		c.Version = 0
	}
}

func (d *decoder) segment(n *node, path string, s *Segment) {
	s.Model = ModelDielectric
	d.object(n, path, "a segment", []field{
		{"name", true, d.str(&s.Name)},
		{"label", false, func(v *node, p string) {
			var l int
			before := len(d.probs)
			d.integer(&l)(v, p)
			if len(d.probs) == before {
				s.Label = &l
			}
		}},
		{"model", false, d.str(&s.Model)},
		{"reference_albedo", false, func(v *node, p string) {
			var a [3]float64
			before := len(d.probs)
			d.vector(a[:], "red, green, blue")(v, p)
			if len(d.probs) == before {
				s.ReferenceAlbedo = &a
			}
		}},
	})
}

func (d *decoder) camera(n *node, path string, c *Camera) {
	d.object(n, path, "a camera", []field{
		{"id", true, d.str(&c.ID)},
		{"width", true, d.integer(&c.Width)},
		{"height", true, d.integer(&c.Height)},
		{"fx", true, d.float(&c.Fx)},
		{"fy", true, d.float(&c.Fy)},
		{"cx", true, d.float(&c.Cx)},
		{"cy", true, d.float(&c.Cy)},
		{"distortion", false, d.vector(c.Distortion[:], "k1, k2, p1, p2, k3")},
		{"position", true, d.vector(c.Position[:], "x, y, z in metres")},
		{"rotation", true, func(v *node, p string) {
			if v.kind != kArray || len(v.arr) != 3 {
				if v.kind == kArray {
					d.errf(v, p, "expected 3 rows of 3 numbers, got %d rows", len(v.arr))
				} else {
					d.typeErr(v, p, "3 rows of 3 numbers (camera-to-world rotation)")
				}
				return
			}
			for i, row := range v.arr {
				d.vector(c.Rotation[i][:], "a rotation row")(row, index(p, i))
			}
		}},
	})
}

func (d *decoder) light(n *node, path string, l *Light) {
	seen := d.object(n, path, "a light", []field{
		{"id", true, d.str(&l.ID)},
		{"type", true, d.str(&l.Type)},
		{"position", false, d.vector(l.Position[:], "x, y, z in metres")},
		{"intensity", false, d.vector(l.Intensity[:], "red, green, blue")},
		{"direction", false, d.vector(l.Direction[:], "x, y, z towards the light")},
		{"irradiance", false, d.vector(l.Irradiance[:], "red, green, blue")},
		{"radius", false, d.float(&l.Radius)},
	})
	if seen == nil {
		return
	}
	var need, forbid []string
	switch l.Type {
	case LightPoint:
		need, forbid = []string{"position", "intensity"}, []string{"direction", "irradiance", "radius"}
	case LightSphere:
		need, forbid = []string{"position", "intensity", "radius"}, []string{"direction", "irradiance"}
	case LightDirectional:
		need, forbid = []string{"direction", "irradiance"}, []string{"position", "intensity", "radius"}
	default:
		if t, ok := seen["type"]; ok && t.kind == kString {
			d.errf(t, join(path, "type"), "unknown light type %q; expected point, directional or sphere%s", l.Type,
				suggestName(l.Type, []string{LightPoint, LightDirectional, LightSphere}))
		}
		return
	}
	for _, k := range need {
		if v, ok := seen[k]; !ok || v.kind == kNull {
			d.errf(n, path, "a %s light needs %q", l.Type, k)
		}
	}
	for _, k := range forbid {
		if v, ok := seen[k]; ok {
			d.warnf(v, join(path, k), "a %s light has no %q (ignored)", l.Type, k)
		}
	}
}

func (d *decoder) photo(n *node, path string, ph *Photo) {
	ph.Encoding = EncodingSRGB
	ph.WhiteLevel = 1
	ph.Exposure = Exposure{Scale: 1}
	ph.Use = UseFit
	d.object(n, path, "a photo", []field{
		{"file", true, d.str(&ph.File)},
		{"camera", true, d.str(&ph.Camera)},
		{"lights", true, func(v *node, p string) {
			ph.Lights = []string{}
			d.array(v, p, "light ids", func(_ int, e *node, ep string) {
				var s string
				d.str(&s)(e, ep)
				ph.Lights = append(ph.Lights, s)
			})
		}},
		{"encoding", false, d.str(&ph.Encoding)},
		{"black_level", false, d.float(&ph.BlackLevel)},
		{"white_level", false, d.float(&ph.WhiteLevel)},
		{"exposure", false, func(v *node, p string) {
			switch v.kind {
			case kNumber:
				d.float(&ph.Exposure.Scale)(v, p)
			case kObject:
				var e Exposure
				d.object(v, p, "the exposure settings", []field{
					{"shutter_s", true, d.float(&e.ShutterS)},
					{"iso", true, d.float(&e.ISO)},
					{"f_number", true, d.float(&e.FNumber)},
				})
				ph.Exposure = e
			default:
				d.typeErr(v, p, `a number or {"shutter_s", "iso", "f_number"}`)
			}
		}},
		{"use", false, d.str(&ph.Use)},
		{"mask", false, d.str(&ph.Mask)},
	})
}
