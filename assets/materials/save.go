package materials

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"strings"

	"patina/assets/atomicfile"
	"patina/assets/capture"
	"patina/brdf"
	"patina/render"
)

// Save writes the file to path atomically (assets/atomicfile), indented
// JSON with a trailing newline. It checks every segment first and writes
// nothing when one is invalid.
func (f *File) Save(path string) error {
	for i := range f.Segments {
		if err := f.Segments[i].check(); err != nil {
			e := err.(*Error)
			return &Error{File: path, Path: fmt.Sprintf("segments[%d].%s", i, e.Path), Msg: e.Msg}
		}
	}
	out := *f
	out.Version = Version
	if out.Segments == nil {
		out.Segments = []Segment{}
	}
	data, err := json.MarshalIndent(&out, "", "  ")
	if err != nil {
		return fmt.Errorf("materials: %s: %w", path, err)
	}
	data = append(data, '\n')
	return atomicfile.Write(path, 0o644, func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	})
}

// Validate checks the file against a capture: every segment of the
// capture (its EffectiveSegments for mesh m, which may be nil when the
// capture lists its segments) has exactly one entry here, every entry names
// a capture segment, each model is one of brdf's kinds and agrees with the
// capture's model for that segment, and every value is in range. It returns
// every problem found, one *Error each, joined by errors.Join (nil when
// there is none).
func (f *File) Validate(c *capture.Capture, m *render.Mesh) error {
	segs := c.EffectiveSegments(m)
	var errs []error
	add := func(path, format string, a ...any) {
		errs = append(errs, &Error{File: f.Path, Path: path, Msg: fmt.Sprintf(format, a...)})
	}
	known := make(map[string]int, len(segs))
	for i, s := range segs {
		known[s.Name] = i
	}
	seen := make(map[string]int, len(f.Segments))
	for i := range f.Segments {
		s := &f.Segments[i]
		p := fmt.Sprintf("segments[%d]", i)
		if j, dup := seen[s.Name]; dup {
			add(p+".name", "segment %q is listed twice (also segments[%d])", s.Name, j)
			continue
		}
		seen[s.Name] = i
		ci, ok := known[s.Name]
		if !ok {
			add(p+".name", "segment %q is not a segment of the capture %s (it has %s)", s.Name, c.Path, quoteNames(segs))
			continue
		}
		if _, err := brdf.ParseKind(s.Model); err != nil {
			add(p+".model", "unknown model %q; expected \"dielectric\", \"metal\" or \"free\"", s.Model)
			continue
		}
		if want := segs[ci].Model; want != "" && want != s.Model {
			add(p+".model", "model %q, but the capture declares segment %q as %q", s.Model, s.Name, want)
		}
		if _, err := s.Params(); err != nil {
			if e, ok := err.(*Error); ok {
				if e.Path != "" { // a problem of the whole segment (brdf's checks) has no field
					p += "." + e.Path
				}
				add(p, "%s", e.Msg)
			} else {
				add(p, "%v", err)
			}
		}
	}
	for _, s := range segs {
		if _, ok := seen[s.Name]; !ok {
			add("segments", "no parameters for the capture's segment %q", s.Name)
		}
	}
	return errors.Join(errs...)
}

// ParamsForMesh returns the reflectance of every segment of mesh m as
// render.Render takes it: indexed by the mesh's segment labels (the index
// render.Hit.Segment reports), mapped to capture segments by
// capture.SegmentIndex and to this file's entries by name.
func (f *File) ParamsForMesh(c *capture.Capture, m *render.Mesh) ([]brdf.Params, error) {
	idx, err := c.SegmentIndex(m)
	if err != nil {
		return nil, fmt.Errorf("materials: %s: %w", c.Path, err)
	}
	segs := c.EffectiveSegments(m)
	out := make([]brdf.Params, len(idx))
	for li, ci := range idx {
		if ci < 0 {
			return nil, &Error{File: f.Path, Msg: fmt.Sprintf("mesh segment %d (%s) belongs to no capture segment", li, labelName(m.SegmentLabels[li]))}
		}
		s := f.Segment(segs[ci].Name)
		if s == nil {
			return nil, &Error{File: f.Path, Path: "segments", Msg: fmt.Sprintf("no parameters for the capture's segment %q", segs[ci].Name)}
		}
		p, err := s.Params()
		if err != nil {
			return nil, &Error{File: f.Path, Path: "segments." + s.Name, Msg: err.Error()}
		}
		out[li] = p
	}
	return out, nil
}

func labelName(l render.SegmentLabel) string {
	if l.Name != "" {
		return fmt.Sprintf("%q", l.Name)
	}
	return fmt.Sprintf("label %d", l.Label)
}

func quoteNames(segs []capture.Segment) string {
	if len(segs) == 0 {
		return "no segments"
	}
	q := make([]string, len(segs))
	for i, s := range segs {
		q[i] = fmt.Sprintf("%q", s.Name)
	}
	return strings.Join(q, ", ")
}
