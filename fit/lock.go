package fit

import (
	"fmt"
	"math"
	"sort"

	"patina/brdf"
)

// Names of the lockable parameters, the materials file's keys.
const (
	ParamDiffuse   = "diffuse"
	ParamSpecular  = "specular"
	ParamRoughness = "roughness"
)

// Lock holds some parameters of one segment at fixed values during the fit:
// their gradient is zeroed, their value is kept exactly, and their sigma is
// reported as 0. The other parameters are fitted with the held ones in the
// model.
type Lock struct {
	// Names are materials-file parameter names: "diffuse", "specular" and
	// "roughness" (a metal has no diffuse parameter; a dielectric's
	// "specular" is its single F0, Values.Specular[0]).
	Names []string
	// Values supplies the held values; only the named fields are read, and
	// its Kind is ignored (the segment's model decides the layout).
	Values brdf.Params
}

// LockError reports a lock the fit cannot honour: the segment, the
// parameter name and what was expected.
type LockError struct {
	Segment string
	Param   string
	Msg     string
}

func (e *LockError) Error() string {
	return fmt.Sprintf("fit: lock on segment %q, parameter %q: %s", e.Segment, e.Param, e.Msg)
}

// lockIndices returns the entries of kind's parameter vector that name
// covers, or an error for a name the kind does not have.
func lockIndices(kind brdf.Kind, name string) ([]int, error) {
	np := kind.NumParams()
	switch name {
	case ParamDiffuse:
		if kind == brdf.Metal {
			return nil, fmt.Errorf("a metal has no diffuse colour to hold (expected %q or %q)", ParamSpecular, ParamRoughness)
		}
		return []int{0, 1, 2}, nil
	case ParamSpecular:
		switch kind {
		case brdf.Dielectric:
			return []int{3}, nil
		case brdf.Metal:
			return []int{0, 1, 2}, nil
		}
		return []int{3, 4, 5}, nil
	case ParamRoughness:
		return []int{np - 1}, nil
	}
	return nil, fmt.Errorf("unknown parameter (expected %q, %q or %q)", ParamDiffuse, ParamSpecular, ParamRoughness)
}

// held is a lock resolved against a segment's kind: which vector entries
// are fixed and at what natural values.
type held struct {
	fixed [brdf.MaxParams]bool
	value [brdf.MaxParams]float64
	names []string // sorted, for the result
}

func (h *held) any() bool {
	if h == nil {
		return false
	}
	for _, f := range h.fixed {
		if f {
			return true
		}
	}
	return false
}

// resolveLock checks l against kind and the fit's bounds and returns the
// fixed entries. A nil lock gives nil.
func resolveLock(seg string, kind brdf.Kind, l *Lock, minRough float64) (*held, error) {
	if l == nil || len(l.Names) == 0 {
		return nil, nil
	}
	h := &held{}
	v := l.Values
	v.Kind = kind
	var vec [brdf.MaxParams]float64
	v.Vector(vec[:0])
	seen := map[string]bool{}
	for _, name := range l.Names {
		if seen[name] {
			return nil, &LockError{Segment: seg, Param: name, Msg: "named twice"}
		}
		seen[name] = true
		idx, err := lockIndices(kind, name)
		if err != nil {
			return nil, &LockError{Segment: seg, Param: name, Msg: err.Error()}
		}
		for _, k := range idx {
			x := vec[k]
			lo := 0.0
			if k == kind.NumParams()-1 {
				lo = minRough
			}
			if math.IsNaN(x) || x < lo || x > 1 {
				return nil, &LockError{Segment: seg, Param: name,
					Msg: fmt.Sprintf("held value %g is outside the fitted range [%g, 1]", x, lo)}
			}
			h.fixed[k], h.value[k] = true, x
		}
		h.names = append(h.names, name)
	}
	sort.Strings(h.names)
	return h, nil
}

// apply writes the held values into a natural parameter vector.
func (h *held) apply(v []float64) {
	if h == nil {
		return
	}
	for k := range v {
		if h.fixed[k] {
			v[k] = h.value[k]
		}
	}
}

// applyParams writes the held values into p.
func (h *held) applyParams(p *brdf.Params) {
	if h == nil {
		return
	}
	var v [brdf.MaxParams]float64
	n := p.Kind.NumParams()
	p.Vector(v[:0])
	h.apply(v[:n])
	_ = p.FromVector(v[:n])
}

// sigmaParams lays a vector of standard deviations out like brdf.Params.
// brdf's FromVector accepts only reflectances in [0, 1], and a standard
// deviation may be larger than 1 or +Inf (not determined at all).
func sigmaParams(kind brdf.Kind, v []float64) brdf.Params {
	p := brdf.Params{Kind: kind}
	switch kind {
	case brdf.Dielectric:
		p.Diffuse = brdf.RGB{v[0], v[1], v[2]}
		p.Specular = brdf.RGB{v[3], v[3], v[3]}
		p.Roughness = v[4]
	case brdf.Metal:
		p.Specular = brdf.RGB{v[0], v[1], v[2]}
		p.Roughness = v[3]
	case brdf.Free:
		p.Diffuse = brdf.RGB{v[0], v[1], v[2]}
		p.Specular = brdf.RGB{v[3], v[4], v[5]}
		p.Roughness = v[6]
	}
	return p
}

// resolveLocks resolves opts.Locks against the segments (opts with its
// defaults): one entry per segment, nil where nothing is held. A lock on a
// segment that is not there is an error.
func resolveLocks(segs []*SegmentObservations, opts Options) ([]*held, error) {
	holds := make([]*held, len(segs))
	known := map[string]bool{}
	for si, so := range segs {
		known[so.Name] = true
		if l, ok := opts.Locks[so.Name]; ok {
			h, err := resolveLock(so.Name, so.Kind, &l, opts.MinRoughness)
			if err != nil {
				return nil, err
			}
			holds[si] = h
		}
	}
	names := make([]string, 0, len(opts.Locks))
	for name := range opts.Locks {
		names = append(names, name)
	}
	sort.Strings(names) // the same error whatever the map order
	for _, name := range names {
		if !known[name] {
			return nil, &LockError{Segment: name, Msg: "the capture has no segment of this name"}
		}
	}
	return holds, nil
}
