package materials

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"

	"patina/assets/textpos"
)

// Load reads and checks the materials file at path. Errors are *Error
// values naming the file and the JSON path; unknown fields are ignored.
func Load(path string) (*File, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	if st, err := f.Stat(); err == nil && st.Size() > MaxFileSize {
		return nil, &Error{File: path, Msg: fmt.Sprintf("file is %d bytes; at most %d are accepted", st.Size(), MaxFileSize)}
	}
	data, err := io.ReadAll(io.LimitReader(f, MaxFileSize+1))
	if err != nil {
		return nil, fmt.Errorf("materials: %s: %w", path, err)
	}
	if len(data) > MaxFileSize {
		return nil, &Error{File: path, Msg: fmt.Sprintf("file exceeds %d bytes", MaxFileSize)}
	}
	return Parse(data, path)
}

// Parse decodes a materials file from data; path is used in errors and
// recorded in File.Path.
func Parse(data []byte, path string) (*File, error) {
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.UseNumber()
	var root any
	if err := dec.Decode(&root); err != nil {
		return nil, jsonError(data, path, err)
	}
	end := int(dec.InputOffset())
	if _, err := dec.Token(); err != io.EOF {
		// The offset of the first byte after the object that is not space.
		off := end + len(data[end:]) - len(bytes.TrimLeft(data[end:], " \t\r\n"))
		line, col := textpos.Pos(data, off)
		return nil, &Error{File: path, Msg: fmt.Sprintf("line %d, column %d: unexpected data after the top-level JSON object", line, col)}
	}
	d := decoder{file: path}
	f := &File{Path: path}
	d.file_(root, f)
	if d.err != nil {
		return nil, d.err
	}
	return f, nil
}

// jsonError describes a JSON decoding error of data with the line and
// column where it happened (counted as the capture reader counts them):
// encoding/json's SyntaxError gives the offset; a file that ends early makes
// the decoder return io.ErrUnexpectedEOF (io.EOF when it holds nothing but
// space), and the place is then the end of the file.
func jsonError(data []byte, path string, err error) error {
	var se *json.SyntaxError
	var off int
	var msg string
	switch {
	case errors.As(err, &se):
		off, msg = int(se.Offset), "invalid JSON: "+se.Error()
	case errors.Is(err, io.ErrUnexpectedEOF):
		off, msg = len(data), "invalid JSON: unexpected end of the file (an object, array or string is not closed)"
	case err == io.EOF:
		off, msg = len(data), "invalid JSON: the file is empty; expected an object"
	default:
		return &Error{File: path, Msg: "invalid JSON: " + err.Error()}
	}
	line, col := textpos.Pos(data, off)
	return &Error{File: path, Msg: fmt.Sprintf("line %d, column %d: %s", line, col, msg)}
}

// decoder walks the generic JSON tree, keeping the first error.
type decoder struct {
	file string
	err  error
}

func (d *decoder) fail(path, format string, a ...any) {
	if d.err == nil {
		d.err = &Error{File: d.file, Path: path, Msg: fmt.Sprintf(format, a...)}
	}
}

func describe(v any) string {
	switch v.(type) {
	case nil:
		return "null"
	case bool:
		return "a boolean"
	case json.Number:
		return "a number"
	case string:
		return "a string"
	case []any:
		return "an array"
	case map[string]any:
		return "an object"
	}
	return "an unknown value"
}

func (d *decoder) object(v any, path string) map[string]any {
	m, ok := v.(map[string]any)
	if !ok {
		d.fail(path, "expected an object, found %s", describe(v))
	}
	return m
}

func (d *decoder) number(v any, path string) (float64, bool) {
	n, ok := v.(json.Number)
	if !ok {
		d.fail(path, "expected a number, found %s", describe(v))
		return 0, false
	}
	x, err := strconv.ParseFloat(string(n), 64)
	if err != nil || math.IsInf(x, 0) {
		d.fail(path, "number %s is out of range", n)
		return 0, false
	}
	return x, true
}

func (d *decoder) integer(v any, path string) (int, bool) {
	x, ok := d.number(v, path)
	if !ok {
		return 0, false
	}
	if x != math.Trunc(x) || math.Abs(x) > 1<<53 {
		d.fail(path, "expected a whole number, found %v", x)
		return 0, false
	}
	return int(x), true
}

func (d *decoder) str(v any, path string) (string, bool) {
	s, ok := v.(string)
	if !ok {
		d.fail(path, "expected a string, found %s", describe(v))
	}
	return s, ok
}

func (d *decoder) vec3(v any, path string, dst *[3]float64) {
	a, ok := v.([]any)
	if !ok || len(a) != 3 {
		if ok {
			d.fail(path, "expected 3 numbers (r, g, b), found %d", len(a))
		} else {
			d.fail(path, "expected an array of 3 numbers (r, g, b), found %s", describe(v))
		}
		return
	}
	for i, e := range a {
		if x, ok := d.number(e, fmt.Sprintf("%s[%d]", path, i)); ok {
			dst[i] = x
		}
	}
}

func (d *decoder) strings(v any, path string) []string {
	a, ok := v.([]any)
	if !ok {
		d.fail(path, "expected an array of strings, found %s", describe(v))
		return nil
	}
	out := make([]string, 0, len(a))
	for i, e := range a {
		if s, ok := d.str(e, fmt.Sprintf("%s[%d]", path, i)); ok {
			out = append(out, s)
		}
	}
	return out
}

func (d *decoder) file_(v any, f *File) {
	m := d.object(v, "")
	if m == nil {
		return
	}
	ver, ok := m["patina_materials"]
	if !ok {
		d.fail("patina_materials", "missing: a materials file starts with {\"patina_materials\": %d, ...}", Version)
		return
	}
	if n, ok := d.integer(ver, "patina_materials"); ok {
		if n != Version {
			d.fail("patina_materials", "version %d is not supported; this program reads version %d", n, Version)
			return
		}
		f.Version = n
	}
	if c, ok := m["capture"]; ok {
		f.Capture, _ = d.str(c, "capture")
	}
	segs, ok := m["segments"]
	if !ok {
		d.fail("segments", "missing: expected an array of segments")
		return
	}
	a, ok := segs.([]any)
	if !ok {
		d.fail("segments", "expected an array, found %s", describe(segs))
		return
	}
	if len(a) > MaxSegments {
		d.fail("segments", "%d segments; at most %d are accepted", len(a), MaxSegments)
		return
	}
	f.Segments = make([]Segment, len(a))
	for i, e := range a {
		d.segment(e, fmt.Sprintf("segments[%d]", i), &f.Segments[i])
	}
	if fi, ok := m["fit"]; ok && fi != nil {
		f.Fit = &FitInfo{}
		d.fit(fi, "fit", f.Fit)
	}
}

func (d *decoder) segment(v any, path string, s *Segment) {
	m := d.object(v, path)
	if m == nil {
		return
	}
	req := func(key string) (any, bool) {
		x, ok := m[key]
		if !ok {
			d.fail(path+"."+key, "missing")
		}
		return x, ok
	}
	if x, ok := req("name"); ok {
		s.Name, _ = d.str(x, path+".name")
	}
	if x, ok := req("model"); ok {
		s.Model, _ = d.str(x, path+".model")
	}
	if x, ok := req("diffuse"); ok {
		d.vec3(x, path+".diffuse", &s.Diffuse)
	}
	if x, ok := req("specular"); ok {
		d.vec3(x, path+".specular", &s.Specular)
	}
	if x, ok := req("roughness"); ok {
		s.Roughness, _ = d.number(x, path+".roughness")
	}
	if x, ok := m["sigma"]; ok && x != nil {
		sm := d.object(x, path+".sigma")
		if sm != nil {
			s.Sigma = &Sigma{}
			if y, ok := sm["diffuse"]; ok {
				d.vec3(y, path+".sigma.diffuse", &s.Sigma.Diffuse)
			}
			if y, ok := sm["specular"]; ok {
				d.vec3(y, path+".sigma.specular", &s.Sigma.Specular)
			}
			if y, ok := sm["roughness"]; ok {
				s.Sigma.Roughness, _ = d.number(y, path+".sigma.roughness")
			}
		}
	}
	if x, ok := m["observations"]; ok {
		s.Observations, _ = d.integer(x, path+".observations")
	}
	if x, ok := m["near_specular"]; ok {
		s.NearSpecular, _ = d.integer(x, path+".near_specular")
	}
	if x, ok := m["rmse"]; ok && x != nil {
		if r, ok := d.number(x, path+".rmse"); ok {
			s.RMSE = &r
		}
	}
	if x, ok := m["warnings"]; ok && x != nil {
		s.Warnings = d.strings(x, path+".warnings")
	}
	if x, ok := m["locked"]; ok && x != nil {
		s.Locked = d.strings(x, path+".locked")
	}
	if x, ok := m["loss_history"]; ok && x != nil {
		a, isArr := x.([]any)
		switch {
		case !isArr:
			d.fail(path+".loss_history", "expected an array of numbers, found %s", describe(x))
		case len(a) > MaxLossHistory:
			d.fail(path+".loss_history", "%d entries; at most %d are accepted", len(a), MaxLossHistory)
		default:
			s.LossHistory = make([]float64, len(a))
			for i, e := range a {
				s.LossHistory[i], _ = d.number(e, fmt.Sprintf("%s.loss_history[%d]", path, i))
			}
		}
	}
	if d.err != nil {
		return
	}
	if err := s.check(); err != nil {
		var e *Error
		if errors.As(err, &e) {
			d.fail(path+"."+e.Path, "%s", e.Msg)
		}
	}
}

func (d *decoder) fit(v any, path string, f *FitInfo) {
	m := d.object(v, path)
	if m == nil {
		return
	}
	if x, ok := m["optimizer"]; ok {
		f.Optimizer, _ = d.str(x, path+".optimizer")
	}
	if x, ok := m["loss"]; ok {
		f.Loss, _ = d.str(x, path+".loss")
	}
	if x, ok := m["passes"]; ok {
		f.Passes, _ = d.integer(x, path+".passes")
	}
	if x, ok := m["seconds"]; ok {
		f.Seconds, _ = d.number(x, path+".seconds")
	}
	if x, ok := m["photos_used"]; ok && x != nil {
		f.PhotosUsed = d.strings(x, path+".photos_used")
	}
	if x, ok := m["holdout"]; ok && x != nil {
		f.Holdout = d.strings(x, path+".holdout")
	}
	if x, ok := m["rejections"]; ok && x != nil {
		rm := d.object(x, path+".rejections")
		if rm != nil {
			f.Rejections = make(map[string]int, len(rm))
			for k, y := range rm {
				if n, ok := d.integer(y, path+".rejections."+k); ok {
					if n < 0 {
						d.fail(path+".rejections."+k, "count %d: expected >= 0", n)
					}
					f.Rejections[k] = n
				}
			}
		}
	}
	if x, ok := m["radiometric_scale"]; ok {
		f.RadiometricScale, _ = d.number(x, path+".radiometric_scale")
		if f.RadiometricScale < 0 {
			d.fail(path+".radiometric_scale", "%v: expected a value >= 0", f.RadiometricScale)
		}
	}
	if x, ok := m["seed"]; ok {
		n, ok := x.(json.Number)
		u, err := strconv.ParseUint(string(n), 10, 64)
		if !ok || err != nil {
			d.fail(path+".seed", "expected a whole number 0..2^64-1, found %s", describe(x))
		}
		f.Seed = u
	}
	if x, ok := m["patina_version"]; ok {
		f.PatinaVersion, _ = d.str(x, path+".patina_version")
	}
	if x, ok := m["created"]; ok {
		f.Created, _ = d.str(x, path+".created")
	}
}
