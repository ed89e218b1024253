package capture

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// FuzzLoadCapture parses arbitrary bytes as a capture file. No input may
// panic; every refusal is an *Error whose problems carry a line; every
// accepted capture validates without touching files and survives
// Marshal -> Parse -> Marshal byte for byte. Seeds: the fixture capture and
// every malformed capture of testdata/bad (plus the regression seeds in
// testdata/fuzz/FuzzLoadCapture).
func FuzzLoadCapture(f *testing.F) {
	seeds, _ := filepath.Glob("../../testdata/bad/capture-*.json")
	seeds = append(seeds, fixtureCaptureFile)
	for _, s := range seeds {
		if data, err := os.ReadFile(s); err == nil {
			f.Add(data)
		}
	}
	f.Add([]byte(`{"patina_capture": 1, "mesh": "m.obj", "cameras": [], "lights": [{"id": "s", "type": "sphere", "position": [0, 0, 1], "intensity": [1, 1, 1], "radius": 0.1}], "photos": [{"file": "a.jpg", "camera": "c", "lights": ["s"], "exposure": {"shutter_s": 0.01, "iso": 200, "f_number": 5.6}}]}`))
	f.Add([]byte(`{"patina_capture": 1, "segments": [{"name": "a", "label": null, "model": "free", "reference_albedo": [0.5, 0.5, 0.5]}]}`))
	const where = "/nonexistent/fuzz/capture.json"
	f.Fuzz(func(t *testing.T, data []byte) {
		c, err := Parse(data, where)
		if err != nil {
			var ce *Error
			if !errors.As(err, &ce) {
				t.Fatalf("untyped error %T: %v", err, err)
			}
			if len(ce.Problems) == 0 || Errors(ce.Problems) == 0 {
				t.Fatalf("error without problems: %v", err)
			}
			for _, p := range ce.Problems {
				if p.Line < 1 || p.Col < 1 {
					t.Fatalf("problem without a position: %+v", p)
				}
			}
			if !strings.HasPrefix(err.Error(), where) {
				t.Fatalf("error does not name the file: %v", err)
			}
			return
		}
		_, probs := c.Check(CheckOptions{SkipFiles: true})
		for _, p := range probs {
			if p.Severity != SevError && p.Severity != SevWarning {
				t.Fatalf("problem with severity %q", p.Severity)
			}
		}
		out, err := c.Marshal()
		if err != nil {
			t.Fatalf("Marshal: %v", err)
		}
		c2, err := Parse(out, where)
		if err != nil {
			t.Fatalf("re-parsing the marshalled capture: %v\n%s", err, out)
		}
		out2, err := c2.Marshal()
		if err != nil || !bytes.Equal(out, out2) {
			t.Fatalf("Marshal is not stable:\n%s\n---\n%s", out, out2)
		}
	})
}
