package metrics

import (
	"errors"
	"strings"
	"testing"
)

// The presets carry the limits published by their sources (REFERENCES.md):
// FADGI 2023 mean dE00 4 star < 2, 3 star < 3.5, 2 star < 5, 1 star < 6.5;
// Metamorfoze (Full) mean <= 3 and maximum <= 7; one just-noticeable
// difference about 1 dE00 (common practice).
func TestPresetLimits(t *testing.T) {
	want := map[string][3]float64{
		"fadgi-4star": {2, 0, 0}, "fadgi-3star": {3.5, 0, 0}, "fadgi-2star": {5, 0, 0}, "fadgi-1star": {6.5, 0, 0},
		"metamorfoze": {3, 0, 7}, "jnd": {1, 0, 0},
	}
	for _, p := range Presets() {
		w, ok := want[p.Name]
		if !ok {
			t.Errorf("unexpected preset %q", p.Name)
			continue
		}
		if p.MeanMax != w[0] || p.P95Max != w[1] || p.MaxMax != w[2] || p.Source == "" {
			t.Errorf("%s: %+v, want limits %v and a source", p.Name, p, w)
		}
		if strings.HasPrefix(p.Name, "fadgi") != p.Strict {
			t.Errorf("%s: Strict %v; FADGI states its limits as <, Metamorfoze as <=", p.Name, p.Strict)
		}
		delete(want, p.Name)
	}
	if len(want) > 0 {
		t.Errorf("missing presets %v", want)
	}
}

func TestVerdict(t *testing.T) {
	r := &Result{DE2000Mean: 2, DE2000P95: 4.5, DE2000Max: 7,
		Segments: []SegmentResult{{Index: 0, Name: "gilding", DE2000Mean: 1.5, DE2000Max: 3}, {Index: 3, DE2000Mean: 3.2, DE2000Max: 9}}}
	cases := []struct {
		tol  Tolerance
		pass bool
		segs []bool
	}{
		{FADGI4Star, false, []bool{true, false}}, // 2 is not < 2
		{FADGI3Star, true, []bool{true, true}},
		{MetamorfozeFull, true, []bool{true, false}}, // 3 <= 3 and 7 <= 7; 3.2 > 3
		{JND, false, []bool{false, false}},
		{Tolerance{Name: "custom", P95Max: 4, Source: "test"}, false, []bool{true, true}}, // p95 4.5 > 4; segments without p95 0 pass
	}
	for _, c := range cases {
		v := c.tol.Verdict(r)
		if v.Pass != c.pass {
			t.Errorf("%s: pass %v, want %v (%s)", c.tol.Name, v.Pass, c.pass, v)
		}
		for i, s := range v.Segments {
			if s.Pass != c.segs[i] {
				t.Errorf("%s segment %d: pass %v, want %v", c.tol.Name, s.Index, s.Pass, c.segs[i])
			}
		}
		// Every verdict names its tolerance and that tolerance's source.
		str := v.String()
		if !strings.Contains(str, c.tol.Name) || !strings.Contains(str, c.tol.Source) {
			t.Errorf("verdict %q does not name %s and its source", str, c.tol.Name)
		}
		if lines := v.SegmentLines(); len(lines) != 2 || !strings.Contains(lines[1], "segment 3") || !strings.Contains(lines[0], c.tol.Name) {
			t.Errorf("segment lines %q", lines)
		}
	}
	if s := FADGI4Star.Verdict(r).String(); !strings.HasPrefix(s, "FAIL against fadgi-4star: mean dE00 2.00 >= 2") {
		t.Errorf("verdict text %q", s)
	}
	if s := MetamorfozeFull.Verdict(r).String(); !strings.HasPrefix(s, "PASS against metamorfoze: mean dE00 2.00 <= 3, max dE00 7.00 <= 7") {
		t.Errorf("verdict text %q", s)
	}
}

func TestPresetByName(t *testing.T) {
	p, err := PresetByName("FADGI-3star")
	if err != nil || p.Name != "fadgi-3star" {
		t.Errorf("PresetByName: %v %v", p, err)
	}
	_, err = PresetByName("gold")
	var ie *InputError
	if !errors.As(err, &ie) || !strings.Contains(err.Error(), "metamorfoze") {
		t.Errorf("unknown preset: %v", err)
	}
}
