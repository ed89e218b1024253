package metrics

import (
	"fmt"
	"strings"
)

// Tolerance is a pass/fail criterion on the Delta E 2000 statistics of a
// comparison. A limit of 0 is not checked. Source names where the limits
// are published.
type Tolerance struct {
	Name    string
	MeanMax float64 // limit on the mean Delta E 2000
	P95Max  float64 // limit on the 95th percentile
	MaxMax  float64 // limit on the maximum
	// Strict makes the limits exclusive (value < limit), as FADGI states
	// them; otherwise a value equal to the limit passes (<=).
	Strict bool
	Source string
}

// The FADGI levels of colour accuracy (mean Delta E 2000 of the target
// patches) and the Metamorfoze Full level; the just-noticeable difference of
// about 1 Delta E 2000 is common practice rather than a standard.
var (
	FADGI4Star = Tolerance{Name: "fadgi-4star", MeanMax: 2, Strict: true,
		Source: "FADGI, Technical Guidelines for Digitizing Cultural Heritage Materials (2023), 4 star: mean Delta E 2000 < 2"}
	FADGI3Star = Tolerance{Name: "fadgi-3star", MeanMax: 3.5, Strict: true,
		Source: "FADGI, Technical Guidelines for Digitizing Cultural Heritage Materials (2023), 3 star: mean Delta E 2000 < 3.5"}
	FADGI2Star = Tolerance{Name: "fadgi-2star", MeanMax: 5, Strict: true,
		Source: "FADGI, Technical Guidelines for Digitizing Cultural Heritage Materials (2023), 2 star: mean Delta E 2000 < 5"}
	FADGI1Star = Tolerance{Name: "fadgi-1star", MeanMax: 6.5, Strict: true,
		Source: "FADGI, Technical Guidelines for Digitizing Cultural Heritage Materials (2023), 1 star: mean Delta E 2000 < 6.5"}
	MetamorfozeFull = Tolerance{Name: "metamorfoze", MeanMax: 3, MaxMax: 7,
		Source: "Metamorfoze Preservation Imaging Guidelines, Metamorfoze (full) level: mean Delta E 2000 <= 3, maximum <= 7"}
	JND = Tolerance{Name: "jnd", MeanMax: 1,
		Source: "common practice: a Delta E 2000 of about 1 is one just-noticeable difference"}
)

// Presets returns the built-in tolerances, strictest first.
func Presets() []Tolerance {
	return []Tolerance{JND, FADGI4Star, MetamorfozeFull, FADGI3Star, FADGI2Star, FADGI1Star}
}

// PresetByName returns the built-in tolerance with the given name
// (case-insensitive), or an error listing the names.
func PresetByName(name string) (Tolerance, error) {
	var names []string
	for _, t := range Presets() {
		if strings.EqualFold(t.Name, name) {
			return t, nil
		}
		names = append(names, t.Name)
	}
	return Tolerance{}, &InputError{What: fmt.Sprintf("tolerance %q: want one of %s", name, strings.Join(names, ", "))}
}

// Check is one statistic held against one limit.
type Check struct {
	Statistic string  // "mean", "p95" or "max" Delta E 2000
	Value     float64 // measured
	Limit     float64
	Pass      bool
}

// Verdict is the outcome of a Tolerance applied to a Result: the whole image
// and each segment.
type Verdict struct {
	Tolerance Tolerance
	Pass      bool // the whole image passes every check
	Checks    []Check
	Segments  []SegmentVerdict
}

// SegmentVerdict is the verdict on one segment.
type SegmentVerdict struct {
	Index  int
	Name   string
	Pass   bool
	Checks []Check
}

func (t Tolerance) checks(mean, p95, max float64) ([]Check, bool) {
	var cs []Check
	pass := true
	add := func(stat string, v, limit float64) {
		if limit <= 0 {
			return
		}
		ok := v <= limit
		if t.Strict {
			ok = v < limit
		}
		cs = append(cs, Check{stat, v, limit, ok})
		pass = pass && ok
	}
	add("mean", mean, t.MeanMax)
	add("p95", p95, t.P95Max)
	add("max", max, t.MaxMax)
	return cs, pass
}

// Verdict judges r against the tolerance, overall and per segment.
func (t Tolerance) Verdict(r *Result) Verdict {
	v := Verdict{Tolerance: t}
	v.Checks, v.Pass = t.checks(r.DE2000Mean, r.DE2000P95, r.DE2000Max)
	for _, s := range r.Segments {
		cs, ok := t.checks(s.DE2000Mean, s.DE2000P95, s.DE2000Max)
		v.Segments = append(v.Segments, SegmentVerdict{s.Index, s.Name, ok, cs})
	}
	return v
}

// String prints the verdict together with the tolerance it was judged
// against and that tolerance's source, for example
// "PASS against fadgi-4star: mean dE00 1.23 < 2 (FADGI, ...)".
func (v Verdict) String() string {
	var b strings.Builder
	if v.Pass {
		b.WriteString("PASS")
	} else {
		b.WriteString("FAIL")
	}
	fmt.Fprintf(&b, " against %s: %s (%s)", v.Tolerance.Name, v.Tolerance.formatChecks(v.Checks), v.Tolerance.Source)
	return b.String()
}

func (t Tolerance) formatChecks(cs []Check) string {
	if len(cs) == 0 {
		return "no limits set"
	}
	parts := make([]string, len(cs))
	for i, c := range cs {
		op := "<="
		switch {
		case t.Strict && c.Pass:
			op = "<"
		case t.Strict:
			op = ">="
		case !c.Pass:
			op = ">"
		}
		parts[i] = fmt.Sprintf("%s dE00 %.2f %s %g", c.Statistic, c.Value, op, c.Limit)
	}
	return strings.Join(parts, ", ")
}

// SegmentLines prints one line per segment in the same form as String.
func (v Verdict) SegmentLines() []string {
	var out []string
	for _, s := range v.Segments {
		word := "FAIL"
		if s.Pass {
			word = "PASS"
		}
		name := s.Name
		if name == "" {
			name = fmt.Sprintf("segment %d", s.Index)
		}
		out = append(out, fmt.Sprintf("%s %s against %s: %s", name, word, v.Tolerance.Name, v.Tolerance.formatChecks(s.Checks)))
	}
	return out
}
