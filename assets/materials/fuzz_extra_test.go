package materials

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"patina/assets/capture"
	"patina/assets/mesh"
)

// FuzzValidateAgainstCapture parses arbitrary bytes as a materials file and
// validates the result against the jar-small fixture capture and its mesh
// (the check render and export run before using a materials file). No
// input may panic; every problem Validate reports is an *Error naming the
// file; a file that passes must give ParamsForMesh one set of valid
// parameters per mesh segment label. Seeds: the valid fixture materials,
// the malformed materials files of testdata/bad, and files that miss,
// rename or repeat a segment.
func FuzzValidateAgainstCapture(f *testing.F) {
	c, err := capture.Load(fixture)
	if err != nil {
		f.Fatal(err)
	}
	m, _, err := mesh.Load(c.Resolve(c.Mesh))
	if err != nil {
		f.Fatal(err)
	}
	valid := `{"patina_materials": 1, "capture": "capture.json", "segments": [
 {"name": "glaze", "model": "dielectric", "diffuse": [0.12, 0.31, 0.27], "specular": [0.04, 0.04, 0.04], "roughness": 0.25},
 {"name": "gilding", "model": "metal", "diffuse": [0, 0, 0], "specular": [0.95, 0.75, 0.35], "roughness": 0.3},
 {"name": "grey card", "model": "dielectric", "diffuse": [0.18, 0.18, 0.18], "specular": [0.04, 0.04, 0.04], "roughness": 0.7}]}`
	f.Add([]byte(valid))
	f.Add([]byte(strings.Replace(valid, `"glaze"`, `"gilding"`, 1)))
	f.Add([]byte(strings.Replace(valid, `"metal"`, `"dielectric"`, 1)))
	f.Add([]byte(strings.Replace(valid, `"grey card"`, `"grey"`, 1)))
	bad, _ := filepath.Glob("../../testdata/bad/materials-*.json")
	for _, b := range bad {
		if data, err := os.ReadFile(b); err == nil {
			f.Add(data)
		}
	}
	const where = "/nonexistent/fuzz/materials.json"
	f.Fuzz(func(t *testing.T, data []byte) {
		mf, err := Parse(data, where)
		if err != nil {
			return
		}
		err = mf.Validate(c, m)
		if err != nil {
			var list []error
			if j, ok := err.(interface{ Unwrap() []error }); ok {
				list = j.Unwrap()
			} else {
				list = []error{err}
			}
			for _, e := range list {
				var me *Error
				if !errors.As(e, &me) {
					t.Fatalf("untyped problem %T: %v", e, e)
				}
				if !strings.Contains(e.Error(), where) {
					t.Fatalf("problem does not name the file: %v", e)
				}
			}
			return
		}
		ps, err := mf.ParamsForMesh(c, m)
		if err != nil {
			t.Fatalf("valid file, but ParamsForMesh fails: %v", err)
		}
		if len(ps) != len(m.SegmentLabels) && !(len(m.SegmentLabels) == 0 && len(ps) <= 1) {
			t.Fatalf("%d parameter sets for %d mesh segments", len(ps), len(m.SegmentLabels))
		}
		for i, p := range ps {
			if err := p.Validate(); err != nil {
				t.Fatalf("segment %d: parameters out of range after validation: %v", i, err)
			}
		}
	})
}
