package materials

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"patina/assets/capture"
	"patina/assets/mesh"
	"patina/brdf"
)

const fixture = "../../testdata/jar-small/capture.json"

const good = `{"patina_materials": 1, "capture": "capture.json", "future_field": {"x": 1},
 "segments": [
  {"name": "glaze", "model": "dielectric", "diffuse": [0.12, 0.31, 0.27], "specular": [0.04, 0.04, 0.04], "roughness": 0.25,
   "sigma": {"diffuse": [0.01, 0.01, 0.01], "specular": [0.002, 0.002, 0.002], "roughness": 0.02},
   "observations": 1200, "near_specular": 40, "rmse": 0.013, "warnings": ["few near-specular observations"], "unknown": true},
  {"name": "gilding", "model": "metal", "diffuse": [0, 0, 0], "specular": [0.9, 0.7, 0.3], "roughness": 0.3},
  {"name": "grey card", "model": "dielectric", "diffuse": [0.18, 0.18, 0.18], "specular": [0.04, 0.04, 0.04], "roughness": 0.7}
 ],
 "fit": {"optimizer": "lbfgs", "loss": "huber", "passes": 3, "seconds": 1.5, "photos_used": ["photos/north-key.png"],
         "rejections": {"saturated": 12, "masked": 300}, "radiometric_scale": 1.02, "seed": 18446744073709551615}}`

func TestParseGoodFile(t *testing.T) {
	f, err := Parse([]byte(good), "m.json")
	if err != nil {
		t.Fatal(err)
	}
	if len(f.Segments) != 3 || f.Segments[0].Sigma == nil || f.Segments[0].Sigma.Roughness != 0.02 ||
		*f.Segments[0].RMSE != 0.013 || f.Segments[0].Observations != 1200 || f.Fit.Rejections["masked"] != 300 ||
		f.Fit.Seed != 18446744073709551615 || f.Fit.PhotosUsed[0] != "photos/north-key.png" {
		t.Fatalf("decoded %+v", f)
	}
	p, err := f.Segments[1].Params()
	if err != nil || p.Kind != brdf.Metal || p.Specular != (brdf.RGB{0.9, 0.7, 0.3}) || p.Roughness != 0.3 {
		t.Fatalf("Params = %+v, %v", p, err)
	}
}

// TestParseErrorsNameThePlace checks that every kind of bad input gets an
// *Error naming the file and the JSON path.
func TestParseErrorsNameThePlace(t *testing.T) {
	cases := []struct{ doc, path, msg string }{
		{`{"segments": []}`, "patina_materials", "missing"},
		{`{"patina_materials": 2, "segments": []}`, "patina_materials", "version 2"},
		{`{"patina_materials": 1}`, "segments", "missing"},
		{`{"patina_materials": 1, "segments": {}}`, "segments", "expected an array"},
		{`{"patina_materials": 1, "segments": [{"name": "a", "model": "dielectric", "diffuse": [0.1, 0.1], "specular": [0,0,0], "roughness": 0.5}]}`, "segments[0].diffuse", "expected 3 numbers"},
		{`{"patina_materials": 1, "segments": [{"name": "a", "model": "dielectric", "diffuse": [0.1, 0.1, 1.5], "specular": [0,0,0], "roughness": 0.5}]}`, "segments[0].diffuse[2]", "out of range"},
		{`{"patina_materials": 1, "segments": [{"name": "a", "model": "dielectric", "diffuse": [0.1, 0.1, 0.1], "specular": [0,0,0], "roughness": "x"}]}`, "segments[0].roughness", "expected a number"},
		{`{"patina_materials": 1, "segments": [{"name": "a", "model": "dielectric", "diffuse": [0.1, 0.1, 0.1], "specular": [0,0,0]}]}`, "segments[0].roughness", "missing"},
		{`{"patina_materials": 1, "segments": [{"name": "a", "model": "dielectric", "diffuse": [0.1, 0.1, 0.1], "specular": [0,0,0], "roughness": 0.5, "sigma": {"roughness": -1}}]}`, "segments[0].sigma.roughness", "standard deviation"},
		{`{"patina_materials": 1, "segments": [], "fit": {"rejections": {"saturated": 1.5}}}`, "fit.rejections.saturated", "whole number"},
		{`{"patina_materials": 1, "segments": [{"name": "a", "model": "dielectric", "diffuse": [0.1, 0.1, 0.1], "specular": [0,0,0], "roughness": 0.5, "locked": ["gloss"]}]}`, "segments[0].locked[0]", "not a parameter"},
		{`{"patina_materials": 1, "segments": [{"name": "a", "model": "dielectric", "diffuse": [0.1, 0.1, 0.1], "specular": [0,0,0], "roughness": 0.5, "locked": ["roughness", "roughness"]}]}`, "segments[0].locked[1]", "listed twice"},
		{`{"patina_materials": 1, "segments": [{"name": "a", "model": "metal", "diffuse": [0, 0, 0], "specular": [0.9,0.9,0.9], "roughness": 0.5, "locked": ["diffuse"]}]}`, "segments[0].locked[0]", "metal has no diffuse"},
		{`{"patina_materials": 1, "segments": [{"name": "a", "model": "dielectric", "diffuse": [0.1, 0.1, 0.1], "specular": [0,0,0], "roughness": 0.5, "locked": "roughness"}]}`, "segments[0].locked", "array of strings"},
		{`{"patina_materials": 1, "segments": [{"name": "a", "model": "dielectric", "diffuse": [0.1, 0.1, 0.1], "specular": [0,0,0], "roughness": 0.5, "loss_history": [0.5, -1]}]}`, "segments[0].loss_history[1]", "finite loss"},
		{`{"patina_materials": 1, "segments": [{"name": "a", "model": "dielectric", "diffuse": [0.1, 0.1, 0.1], "specular": [0,0,0], "roughness": 0.5, "loss_history": {}}]}`, "segments[0].loss_history", "array of numbers"},
		{`{"patina_materials": 1, "segments": [], "fit": {"passes": 1e400}}`, "fit.passes", "out of range"},
	}
	for _, c := range cases {
		_, err := Parse([]byte(c.doc), "bad.json")
		var e *Error
		if !errors.As(err, &e) {
			t.Fatalf("%s: error %v is not an *Error", c.doc, err)
		}
		if e.File != "bad.json" || e.Path != c.path || !strings.Contains(e.Msg, c.msg) {
			t.Errorf("%s:\n got %q (path %q)\nwant path %q and %q", c.doc, err, e.Path, c.path, c.msg)
		}
	}
	_, err := Parse([]byte("{\n  \"patina_materials\": 1,\n  \"segments\": [,]\n}"), "syntax.json")
	if err == nil || !strings.Contains(err.Error(), "line 3") {
		t.Errorf("syntax error without its line: %v", err)
	}
}

func TestValidateAgainstCapture(t *testing.T) {
	c, err := capture.Load(fixture)
	if err != nil {
		t.Fatal(err)
	}
	m, _, err := mesh.Load(c.Resolve(c.Mesh))
	if err != nil {
		t.Fatal(err)
	}
	f, err := Parse([]byte(good), "m.json")
	if err != nil {
		t.Fatal(err)
	}
	if err := f.Validate(c, m); err != nil {
		t.Fatal(err)
	}
	params, err := f.ParamsForMesh(c, m)
	if err != nil || len(params) != len(m.SegmentLabels) {
		t.Fatalf("ParamsForMesh: %v, %d entries for %d mesh segments", err, len(params), len(m.SegmentLabels))
	}
	for li, l := range m.SegmentLabels {
		want := map[int]string{0: "glaze", 1: "gilding", 2: "grey card"}[l.Label]
		p, _ := f.Segment(want).Params()
		if params[li] != p {
			t.Errorf("mesh segment %d (label %d) got %+v, want %s", li, l.Label, params[li], want)
		}
	}
	bad := *f
	bad.Segments = append([]Segment(nil), f.Segments...)
	bad.Segments[0].Name = "glazed"
	bad.Segments[1].Model = "dielectric"
	err = bad.Validate(c, m)
	for _, want := range []string{`segments[0].name: segment "glazed" is not a segment`, `segments[1].model: model "dielectric", but the capture declares`, `no parameters for the capture's segment "glaze"`} {
		if err == nil || !strings.Contains(err.Error(), want) {
			t.Errorf("Validate error %v lacks %q", err, want)
		}
	}
}

func TestSaveRoundTripAndAtomic(t *testing.T) {
	f, err := Parse([]byte(good), "m.json")
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	p := filepath.Join(dir, "out.json")
	if err := f.Save(p); err != nil {
		t.Fatal(err)
	}
	g, err := Load(p)
	if err != nil {
		t.Fatal(err)
	}
	if len(g.Segments) != 3 || g.Segments[0].Warnings[0] != f.Segments[0].Warnings[0] || *g.Segments[0].RMSE != 0.013 ||
		g.Fit.RadiometricScale != 1.02 || g.Segments[2].Diffuse != f.Segments[2].Diffuse {
		t.Fatalf("round trip lost data: %+v", g)
	}
	// An invalid segment writes nothing and leaves the old file intact.
	before, _ := os.ReadFile(p)
	f.Segments[2].Roughness = 2
	if err := f.Save(p); err == nil || !strings.Contains(err.Error(), "segments[2].roughness") {
		t.Fatalf("Save of an invalid file: %v", err)
	}
	after, _ := os.ReadFile(p)
	if string(before) != string(after) {
		t.Fatal("failed Save changed the file")
	}
	if ents, _ := os.ReadDir(dir); len(ents) != 1 {
		t.Fatalf("temporary files left: %v", ents)
	}
	s := FromParams("x", brdf.Params{Kind: brdf.Free, Diffuse: brdf.RGB{0.1, 0.2, 0.3}, Specular: brdf.RGB{0.5, 0.5, 0.5}, Roughness: 0.4})
	if q, err := s.Params(); err != nil || q.Diffuse[2] != 0.3 || s.Model != "free" {
		t.Fatalf("FromParams/Params: %+v %v", q, err)
	}
}

// TestLockedAndHistoryRoundTrip saves and reloads a segment's locked
// parameter names and loss history, and checks that Save refuses what
// Parse refuses (an unknown name).
func TestLockedAndHistoryRoundTrip(t *testing.T) {
	f := &File{Version: Version, Capture: "c.json", Segments: []Segment{
		{Name: "a", Model: "dielectric", Diffuse: [3]float64{0.2, 0.3, 0.4}, Specular: [3]float64{0.04, 0.04, 0.04}, Roughness: 0.3,
			Locked: []string{"roughness", "specular"}, LossHistory: []float64{0.5, 0.25, 0.125}},
	}}
	p := filepath.Join(t.TempDir(), "m.json")
	if err := f.Save(p); err != nil {
		t.Fatal(err)
	}
	g, err := Load(p)
	if err != nil {
		t.Fatal(err)
	}
	s := g.Segments[0]
	if len(s.Locked) != 2 || s.Locked[0] != "roughness" || s.Locked[1] != "specular" ||
		len(s.LossHistory) != 3 || s.LossHistory[2] != 0.125 {
		t.Fatalf("round trip: locked %v, history %v", s.Locked, s.LossHistory)
	}
	f.Segments[0].Locked = []string{"shine"}
	if err := f.Save(p); err == nil || !strings.Contains(err.Error(), "segments[0].locked[0]") {
		t.Fatalf("Save with an unknown locked name: %v", err)
	}
}
