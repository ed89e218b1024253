package capture

import (
	"fmt"
	"strconv"

	"patina/render"
)

// EffectiveSegments returns the capture's segments, or when it lists none,
// the default segments: one per mesh segment label (named after the OBJ
// group, or "segment N" for PLY label N), all dielectric.
func (c *Capture) EffectiveSegments(m *render.Mesh) []Segment {
	if len(c.Segments) > 0 || m == nil {
		return c.Segments
	}
	segs := make([]Segment, 0, len(m.SegmentLabels))
	for _, l := range m.SegmentLabels {
		s := Segment{Name: l.Name, Model: ModelDielectric}
		if l.Label >= 0 {
			lab := l.Label
			s.Label = &lab
			if s.Name == "" {
				s.Name = "segment " + strconv.Itoa(lab)
			}
		}
		segs = append(segs, s)
	}
	if len(segs) == 0 {
		segs = append(segs, Segment{Name: "surface", Model: ModelDielectric})
	}
	return segs
}

// SegmentIndex maps each entry of m.SegmentLabels to an index into
// EffectiveSegments(m), or -1 when no capture segment claims it. A capture
// segment with a label claims the mesh labels with that Label (PLY); one
// without a label claims the mesh labels whose Name equals its name (OBJ
// usemtl or g). Two capture segments claiming the same mesh label is an
// error.
func (c *Capture) SegmentIndex(m *render.Mesh) ([]int, error) {
	segs := c.EffectiveSegments(m)
	idx := make([]int, len(m.SegmentLabels))
	for li, l := range m.SegmentLabels {
		idx[li] = -1
		for si, s := range segs {
			match := false
			if s.Label != nil {
				match = l.Label >= 0 && *s.Label == l.Label
			} else {
				match = l.Name != "" && s.Name == l.Name
			}
			if !match {
				continue
			}
			if idx[li] >= 0 {
				return nil, fmt.Errorf("segments %q and %q both claim mesh segment %s", segs[idx[li]].Name, s.Name, describeLabel(l))
			}
			idx[li] = si
		}
	}
	return idx, nil
}

// TriangleSegments returns, for each triangle of m, the index into
// EffectiveSegments(m) of its segment, or -1.
func (c *Capture) TriangleSegments(m *render.Mesh) ([]int32, error) {
	idx, err := c.SegmentIndex(m)
	if err != nil {
		return nil, err
	}
	out := make([]int32, len(m.Segments))
	for t, s := range m.Segments {
		out[t] = -1
		if int(s) >= 0 && int(s) < len(idx) {
			out[t] = int32(idx[s])
		}
	}
	return out, nil
}
