package main

import (
	"image/color"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"patina/assets/hdr"
)

const jarCapture = "../../testdata/jar-small/capture.json"

const jarMaterials = `{"patina_materials": 1, "capture": "capture.json", "segments": [
 {"name": "glaze", "model": "dielectric", "diffuse": [0.12, 0.31, 0.27], "specular": [0.04, 0.04, 0.04], "roughness": 0.25},
 {"name": "gilding", "model": "metal", "diffuse": [0, 0, 0], "specular": [0.95, 0.75, 0.35], "roughness": 0.3},
 {"name": "grey card", "model": "dielectric", "diffuse": [0.18, 0.18, 0.18], "specular": [0.04, 0.04, 0.04], "roughness": 0.7}]}`

func writeMaterials(t *testing.T) (dir, path string) {
	dir = t.TempDir()
	path = filepath.Join(dir, "m.json")
	if err := os.WriteFile(path, []byte(jarMaterials), 0o644); err != nil {
		t.Fatal(err)
	}
	return dir, path
}

// TestRenderPhotoViewMatchesCamera renders the view of photo 2 (camera
// "east", 64x48 with radial distortion) and checks that the image has the
// camera's resolution, is written, and that the object covers the pixels
// the photo's mask-free render puts it at (alpha varies).
func TestRenderPhotoViewMatchesCamera(t *testing.T) {
	dir, m := writeMaterials(t)
	out := filepath.Join(dir, "east.png")
	code, stdout, stderr := runCLI(t, "render", jarCapture, "-materials", m, "-photo", "2", "-spp", "4", "-o", out, "-transparent", "-progress", "never")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	if !strings.Contains(stdout, "64x48") {
		t.Fatalf("stdout %q", stdout)
	}
	f, err := os.Open(out)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatal(err)
	}
	if b := img.Bounds(); b.Dx() != 64 || b.Dy() != 48 {
		t.Fatalf("image %v, want the camera's 64x48", b)
	}
	covered, empty := 0, 0
	for y := 0; y < 48; y++ {
		for x := 0; x < 64; x++ {
			_, _, _, a := img.At(x, y).RGBA()
			if a == 0xffff {
				covered++
			} else if a == 0 {
				empty++
			}
		}
	}
	if covered < 100 || empty < 100 {
		t.Fatalf("covered %d, empty %d pixels: the object is not framed as the photo frames it", covered, empty)
	}
	// Linear output by extension, with the orbit camera and the studio.
	hout := filepath.Join(dir, "orbit.pfm")
	code, _, stderr = runCLI(t, "render", jarCapture, "-materials", m, "-orbit", "45,30,0", "-size", "40x30", "-env", "studio", "-spp", "2", "-o", hout, "-progress", "never")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	im, err := hdr.ReadFile(hout)
	if err != nil || im.Width != 40 || im.Height != 30 {
		t.Fatalf("PFM %v: %+v", err, im)
	}
}

// TestRenderBadInputWritesNothing checks exit status 2 and no output file
// for mistakes on the command line.
func TestRenderBadInputWritesNothing(t *testing.T) {
	dir, m := writeMaterials(t)
	out := filepath.Join(dir, "x.png")
	cases := [][]string{
		{"render", jarCapture, "-materials", m},
		{"render", jarCapture, "-materials", m, "-o", out, "-photo", "9"},
		{"render", jarCapture, "-materials", m, "-o", out, "-light", "point:1,2:1,1,1"},
		{"render", jarCapture, "-materials", m, "-o", out, "-env", "sky:95,0"},
		{"render", jarCapture, "-materials", m, "-o", out, "-env", filepath.Join(dir, "missing.hdr")},
		{"render", jarCapture, "-materials", filepath.Join(dir, "missing.json"), "-o", out},
		{"render", jarCapture, "-materials", m, "-o", filepath.Join(dir, "x.jpg")},
		{"render", jarCapture, "-materials", m, "-o", out, "-spp", "0"},
	}
	for _, c := range cases {
		code, _, stderr := runCLI(t, c...)
		if code != 2 {
			t.Errorf("%v: exit %d, want 2 (%s)", c[3:], code, stderr)
		}
		if _, err := os.Stat(out); err == nil {
			t.Fatalf("%v wrote %s", c[3:], out)
		}
	}
	// A materials file naming a segment the capture lacks.
	bad := filepath.Join(dir, "bad.json")
	os.WriteFile(bad, []byte(strings.Replace(jarMaterials, `"glaze"`, `"glass"`, 1)), 0o644)
	code, _, stderr := runCLI(t, "render", jarCapture, "-materials", bad, "-o", out)
	if code != 2 || !strings.Contains(stderr, `segments[0].name`) {
		t.Errorf("exit %d, stderr %q", code, stderr)
	}
}

// TestRenderEnvironmentFileAndLights renders with an HDR environment file
// (written by assets/hdr), a sphere light and a directional light, in
// direct mode, to a 16-bit PNG.
func TestRenderEnvironmentFileAndLights(t *testing.T) {
	dir, m := writeMaterials(t)
	env := hdr.NewImage(16, 8)
	for i := range env.Pix {
		env.Pix[i] = 0.5
	}
	envPath := filepath.Join(dir, "env.hdr")
	if err := hdr.WriteFile(envPath, env); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "lit.png")
	code, _, stderr := runCLI(t, "render", jarCapture, "-materials", m, "-env", envPath, "-env-rotate", "30", "-env-scale", "2",
		"-light", "sphere:0.3,-0.3,0.5:1,1,1:0.05", "-light", "directional:0,-1,1:0.5,0.5,0.5", "-direct",
		"-size", "32x24", "-spp", "2", "-bits", "16", "-o", out, "-progress", "never")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	f, err := os.Open(out)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatal(err)
	}
	if m := img.ColorModel(); img.Bounds().Dx() != 32 || (m != color.NRGBA64Model && m != color.RGBA64Model) {
		t.Fatalf("image %v %T, want 32 wide, 16-bit", img.Bounds(), img)
	}
}
