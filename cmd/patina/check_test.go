package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"patina/assets/hdr"
)

const jarSmall = "../../testdata/jar-small/capture.json"

func TestCheckFixtureCapture(t *testing.T) {
	code, out, errOut := runCLI(t, "check", jarSmall)
	if code != 0 {
		t.Fatalf("exit %d\n%s%s", code, out, errOut)
	}
	for _, want := range []string{
		"712 triangles", "363 vertices", "bounds (-0.076, -0.15, 0) to (0.165, 0.076, 0.195) m",
		`"glaze"`, "576 triangles", `"gilding"`, "128 triangles", `"grey card"`, "8 triangles",
		"cameras (2):", "lights (3):", "photos (4): 3 fit, 1 holdout, 0 ignore", "no problems found",
	} {
		if !strings.Contains(out, want) {
			t.Errorf("summary lacks %q:\n%s", want, out)
		}
	}
}

func TestCheckJSON(t *testing.T) {
	// The flag may follow the file.
	code, out, errOut := runCLI(t, "check", jarSmall, "-json")
	if code != 0 {
		t.Fatalf("exit %d\n%s", code, errOut)
	}
	var res struct {
		Kind    string
		Errors  int
		Summary struct {
			Mesh struct {
				Triangles int
				BoundsMax [3]float64 `json:"bounds_max"`
			}
			Segments []struct {
				Name      string
				Triangles int
			}
			Cameras []struct{ ID string }
			Photos  map[string]int
		}
		Problems []struct{ Path, Message, Severity string }
	}
	if err := json.Unmarshal([]byte(out), &res); err != nil {
		t.Fatalf("%v\n%s", err, out)
	}
	if res.Kind != "capture" || res.Errors != 0 || res.Summary.Mesh.Triangles != 712 || len(res.Summary.Segments) != 3 ||
		res.Summary.Segments[1].Triangles != 128 || len(res.Summary.Cameras) != 2 || res.Summary.Photos["holdout"] != 1 {
		t.Errorf("unexpected JSON result %+v", res)
	}
	// Problems come out with their paths too.
	code, out, _ = runCLI(t, "check", "-json", "../../testdata/bad/capture-unknown-camera.json")
	if code != 2 || !strings.Contains(out, `"path": "photos[3].camera"`) || !strings.Contains(out, `"line": 112`) {
		t.Errorf("exit %d\n%s", code, out)
	}
}

func TestCheckOtherFiles(t *testing.T) {
	code, out, _ := runCLI(t, "check", "../../testdata/jar-small/mesh/jar.ply")
	if code != 0 || !strings.Contains(out, "ply ascii, 712 triangles") || !strings.Contains(out, `label 1 "gilding": 128 triangles`) {
		t.Errorf("mesh: exit %d\n%s", code, out)
	}
	code, out, _ = runCLI(t, "check", "../../testdata/jar-small/photos/north-sky.png")
	if code != 0 || !strings.Contains(out, "PNG, 64x48 pixels, 16-bit RGB") {
		t.Errorf("photo: exit %d\n%s", code, out)
	}
	code, out, _ = runCLI(t, "check", "../../testdata/jar-small/photos/east-key-fill.tif")
	if code != 0 || !strings.Contains(out, "TIFF, 64x48 pixels, 16-bit RGB") {
		t.Errorf("tiff: exit %d\n%s", code, out)
	}
	img := hdr.NewImage(4, 2)
	img.SetRGB(1, 1, 2.5, 0.5, 0.25)
	p := filepath.Join(t.TempDir(), "env.hdr")
	if err := hdr.WriteFile(p, img); err != nil {
		t.Fatal(err)
	}
	code, out, _ = runCLI(t, "check", p)
	if code != 0 || !strings.Contains(out, "4x2 pixels") || !strings.Contains(out, "max (2.5") {
		t.Errorf("hdr: exit %d\n%s", code, out)
	}
}

func TestCheckUsage(t *testing.T) {
	if code, _, errOut := runCLI(t, "check"); code != 2 || !strings.Contains(errOut, "expected one FILE") {
		t.Errorf("no file: exit %d %q", code, errOut)
	}
	p := filepath.Join(t.TempDir(), "notes.txt")
	os.WriteFile(p, []byte("hello"), 0o644)
	if code, out, _ := runCLI(t, "check", p); code != 2 || !strings.Contains(out, `extension ".txt"`) {
		t.Errorf("unknown extension: exit %d %q", code, out)
	}
	if code, out, _ := runCLI(t, "check", "nowhere/capture.json"); code != 2 || !strings.Contains(out, "nowhere/capture.json") {
		t.Errorf("missing file: exit %d %q", code, out)
	}
	if code, _, _ := runCLI(t, "check", "-h"); code != 0 {
		t.Errorf("-h: exit %d", code)
	}
	if code, _, _ := runCLI(t, "check", "-bogus", jarSmall); code != 2 {
		t.Errorf("bad flag: exit %d", code)
	}
}

// Checkers of JSON formats are chosen by the field that names the format.
func TestCheckJSONKinds(t *testing.T) {
	if _, ok := jsonKinds["patina_capture"]; !ok {
		t.Fatal("no capture checker")
	}
	p := filepath.Join(t.TempDir(), "both.json")
	os.WriteFile(p, []byte(`{"patina_capture": 1, "patina_other": 1}`), 0o644)
	jsonKinds["patina_other"] = checkCapture
	defer delete(jsonKinds, "patina_other")
	if code, out, _ := runCLI(t, "check", p); code != 2 || !strings.Contains(out, "several formats") {
		t.Errorf("exit %d %q", code, out)
	}
}
