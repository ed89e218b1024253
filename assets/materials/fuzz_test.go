package materials

import "testing"

// FuzzParse feeds arbitrary bytes to Parse: it must never panic, and a
// file it accepts must have valid parameters for every segment.
func FuzzParse(f *testing.F) {
	f.Add([]byte(good))
	f.Add([]byte(`{"patina_materials": 1, "segments": [{"name": "a", "model": "metal", "diffuse": [0,0,0], "specular": [1,1,1], "roughness": 0}]}`))
	f.Add([]byte(`{"patina_materials": 1, "segments": [null]}`))
	f.Fuzz(func(t *testing.T, data []byte) {
		m, err := Parse(data, "fuzz.json")
		if err != nil {
			return
		}
		for i := range m.Segments {
			if err := m.Segments[i].check(); err != nil {
				t.Fatalf("accepted segment %d fails its check: %v", i, err)
			}
		}
	})
}
