package capture

import (
	"bytes"
	"errors"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"patina/render"
)

const fixtureCaptureFile = fixtureDir + "/capture.json"

func loadFixture(t *testing.T) *Capture {
	t.Helper()
	c, err := Load(fixtureCaptureFile)
	if err != nil {
		t.Fatal(err)
	}
	return c
}

func TestLoadFixture(t *testing.T) {
	c := loadFixture(t)
	if c.Version != 1 || c.Up != "+z" || c.Mesh != "mesh/jar.ply" || len(c.Cameras) != 2 || len(c.Lights) != 3 || len(c.Photos) != 4 {
		t.Fatalf("unexpected capture %+v", c)
	}
	if !filepath.IsAbs(c.Path) || c.Dir != filepath.Dir(c.Path) {
		t.Errorf("Path %q Dir %q", c.Path, c.Dir)
	}
	if got := c.Resolve("photos/a.png"); got != filepath.Join(c.Dir, "photos", "a.png") {
		t.Errorf("Resolve: %s", got)
	}
	sum, probs := c.Check(CheckOptions{DecodePhotos: true})
	for _, p := range probs {
		t.Errorf("fixture problem: %s (%s)", p, p.Severity)
	}
	if sum.Mesh == nil || sum.Mesh.NumTriangles() != 712 {
		t.Fatalf("mesh not loaded")
	}
	if want := []int{576, 128, 8}; !reflect.DeepEqual(sum.SegmentTriangles, want) {
		t.Errorf("segment triangles %v, want %v", sum.SegmentTriangles, want)
	}
	if sum.Photos[UseFit] != 3 || sum.Photos[UseHoldout] != 1 {
		t.Errorf("photos per use %v", sum.Photos)
	}
	e := c.Photos[2]
	if e.Encoding != EncodingLinear || e.BlackLevel != 0.004 || e.WhiteLevel != 0.96 || e.Exposure.Multiplier() != 2 {
		t.Errorf("photo 2 decoding %+v", e)
	}
	img, err := c.LoadPhoto(2)
	if err != nil {
		t.Fatal(err)
	}
	if img.Width != 64 || img.Height != 48 {
		t.Errorf("photo size %dx%d", img.Width, img.Height)
	}
	mask, err := c.LoadMask(0, 64, 48)
	if err != nil || len(mask) != 64*48 {
		t.Fatalf("mask: %v", err)
	}
}

// The fixture photos hold the radiance the generator computed: the decoded
// value of a card pixel under the key light matches the Lambertian formula
// rho/pi * I cos(theta) / r^2 (REFERENCES.md, analytic checks) within the
// noise and quantisation.
func TestFixturePhotoRadiance(t *testing.T) {
	c := loadFixture(t)
	cam, _ := c.CameraByID("north")
	img, err := c.LoadPhoto(0)
	if err != nil {
		t.Fatal(err)
	}
	key, _ := c.LightByID("key")
	// Project the card's centre into the north camera (pinhole, no
	// distortion) and compare the pixel there.
	p := [3]float64{0.125, -0.11, 0.0005}
	d := sub3(p, cam.Position)
	var xc [3]float64
	for i := 0; i < 3; i++ {
		xc[i] = cam.Rotation[0][i]*d[0] + cam.Rotation[1][i]*d[1] + cam.Rotation[2][i]*d[2]
	}
	u := cam.Fx*xc[0]/xc[2] + cam.Cx
	v := cam.Fy*xc[1]/xc[2] + cam.Cy
	px, py := int(math.Round(u)), int(math.Round(v))
	toL := sub3(key.Position, p)
	r2 := dot3(toL, toL)
	cos := toL[2] / math.Sqrt(r2)
	for k := 0; k < 3; k++ {
		want := 0.18 / math.Pi * key.Intensity[k] * cos / r2
		got := float64(img.Pix[3*(py*img.Width+px)+k])
		if math.Abs(got-want) > 0.03*want+0.004 {
			t.Errorf("card pixel (%d,%d) channel %d: %v, Lambert gives %v", px, py, k, got, want)
		}
	}
}

func TestSaveRoundTrip(t *testing.T) {
	c := loadFixture(t)
	orig, _ := os.ReadFile(fixtureCaptureFile)
	data, err := c.Marshal()
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(data, orig) {
		t.Errorf("Marshal of the loaded fixture differs from the file:\n%s", data)
	}
	// Saving elsewhere rewrites the relative paths so they still resolve.
	dir := t.TempDir()
	out := filepath.Join(dir, "sub", "copy.json")
	os.MkdirAll(filepath.Dir(out), 0o755)
	if err := c.Save(out); err != nil {
		t.Fatal(err)
	}
	d, err := Load(out)
	if err != nil {
		t.Fatal(err)
	}
	if errs := Errors(d.Validate()); errs != 0 {
		t.Errorf("saved copy has %d errors: %v", errs, d.Validate())
	}
	if d.Resolve(d.Mesh) != loadFixture(t).Resolve("mesh/jar.ply") {
		t.Errorf("mesh path %q does not resolve to the fixture's", d.Mesh)
	}
	// Everything but the paths survives exactly.
	c2 := loadFixture(t)
	d.Path, d.Dir, d.Mesh = c2.Path, c2.Dir, c2.Mesh
	for i := range d.Photos {
		d.Photos[i].File, d.Photos[i].Mask = c2.Photos[i].File, c2.Photos[i].Mask
	}
	d.pos, d.lines, c2.pos, c2.lines = nil, nil, nil, nil
	if !reflect.DeepEqual(d, c2) {
		t.Errorf("round trip changed the capture:\n%+v\n%+v", d, c2)
	}
}

func TestExposureSettings(t *testing.T) {
	src := strings.Replace(string(mustRead(t, fixtureCaptureFile)), `"exposure": 2,`, `"exposure": {"shutter_s": 0.0125, "iso": 100, "f_number": 8},`, 1)
	c, err := Parse([]byte(src), filepath.Join(fixtureDir, "x.json"))
	if err != nil {
		t.Fatal(err)
	}
	e := c.Photos[2].Exposure
	// Relative exposure t*S/N^2 = 0.0125*100/64 (common practice: the
	// photographic exposure equation); the multiplier is its reciprocal.
	if !e.IsSettings() || math.Abs(e.Relative()-0.01953125) > 1e-15 || math.Abs(e.Multiplier()-51.2) > 1e-12 {
		t.Errorf("exposure %+v relative %v multiplier %v", e, e.Relative(), e.Multiplier())
	}
	data, _ := c.Marshal()
	back, err := Parse(data, filepath.Join(fixtureDir, "x.json"))
	if err != nil || back.Photos[2].Exposure != e {
		t.Errorf("settings not written back (%v):\n%s", err, data)
	}
	probs := c.Validate()
	if !hasProblem(probs, "photos", "camera settings") {
		t.Errorf("mixed exposure forms not warned about: %v", probs)
	}
}

func mustRead(t *testing.T, p string) []byte {
	t.Helper()
	b, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

func hasProblem(ps []Problem, path, substr string) bool {
	for _, p := range ps {
		if p.Path == path && strings.Contains(p.Msg, substr) {
			return true
		}
	}
	return false
}

// Load errors: each case names the JSON path, the line and the column.
func TestLoadErrors(t *testing.T) {
	cases := []struct {
		name, src string
		path      string
		line, col int
		msg       string
	}{
		{"syntax", "{\n  \"patina_capture\": 1,\n  \"mesh\": \"m.ply\"\n  \"cameras\": []\n}", "", 4, 3, "JSON syntax error"},
		{"truncated", "{\"patina_capture\": 1, \"cameras\": [", "", 1, 35, "unexpected end"},
		{"trailing", "{\"patina_capture\": 1} x", "", 1, 23, "JSON syntax error"},
		{"not an object", "[1, 2]", "", 1, 1, "expected an object"},
		{"no version", `{"mesh": "m.ply", "cameras": [], "lights": [], "photos": []}`, "", 1, 1, `no "patina_capture"`},
		{"version 2", `{"patina_capture": 2, "mesh": "m.ply", "cameras": [], "lights": [], "photos": []}`, "patina_capture", 1, 20, "version 2 is not supported"},
		{"fx string", "{\"patina_capture\": 1, \"mesh\": \"m.ply\", \"lights\": [], \"photos\": [],\n\"cameras\": [{\"id\": \"a\", \"width\": 4, \"height\": 3, \"fx\": \"100\", \"fy\": 1, \"cx\": 1, \"cy\": 1, \"position\": [0,0,0], \"rotation\": [[1,0,0],[0,1,0],[0,0,1]]}]}", "cameras[0].fx", 2, 56, `expected a number, got a string "100"`},
		{"width fraction", `{"patina_capture": 1, "mesh": "m.ply", "lights": [], "photos": [], "cameras": [{"id": "a", "width": 4.5, "height": 3, "fx": 1, "fy": 1, "cx": 1, "cy": 1, "position": [0,0,0], "rotation": [[1,0,0],[0,1,0],[0,0,1]]}]}`, "cameras[0].width", 1, 101, "expected an integer"},
		{"rotation rows", `{"patina_capture": 1, "mesh": "m.ply", "lights": [], "photos": [], "cameras": [{"id": "a", "width": 4, "height": 3, "fx": 1, "fy": 1, "cx": 1, "cy": 1, "position": [0,0,0], "rotation": [[1,0,0],[0,1,0]]}]}`, "cameras[0].rotation", 1, 0, "3 rows"},
		{"position short", `{"patina_capture": 1, "mesh": "m.ply", "lights": [], "photos": [], "cameras": [{"id": "a", "width": 4, "height": 3, "fx": 1, "fy": 1, "cx": 1, "cy": 1, "position": [0,0], "rotation": [[1,0,0],[0,1,0],[0,0,1]]}]}`, "cameras[0].position", 1, 0, "expected 3 numbers"},
		{"huge number", `{"patina_capture": 1, "mesh": "m.ply", "cameras": [], "photos": [], "lights": [{"id": "a", "type": "point", "position": [0,0,0], "intensity": [1e999, 1, 1]}]}`, "lights[0].intensity[0]", 1, 0, "out of range"},
		{"NaN string", `{"patina_capture": 1, "mesh": "m.ply", "cameras": [], "photos": [], "lights": [{"id": "a", "type": "point", "position": [0,0,0], "intensity": ["NaN", 1, 1]}]}`, "lights[0].intensity[0]", 1, 0, `got a string "NaN"`},
		{"light type", `{"patina_capture": 1, "mesh": "m.ply", "cameras": [], "photos": [], "lights": [{"id": "a", "type": "piont", "position": [0,0,0], "intensity": [1, 1, 1]}]}`, "lights[0].type", 1, 0, `did you mean "point"?`},
		{"point without intensity", `{"patina_capture": 1, "mesh": "m.ply", "cameras": [], "photos": [], "lights": [{"id": "a", "type": "point", "position": [0,0,0]}]}`, "lights[0]", 1, 0, `needs "intensity"`},
		{"duplicate key", `{"patina_capture": 1, "mesh": "m.ply", "mesh": "n.ply", "cameras": [], "lights": [], "photos": []}`, "mesh", 1, 0, "appears twice"},
		{"lights not strings", `{"patina_capture": 1, "mesh": "m.ply", "cameras": [], "lights": [], "photos": [{"file": "a.png", "camera": "c", "lights": [3]}]}`, "photos[0].lights[0]", 1, 0, "expected a string"},
		{"exposure bool", `{"patina_capture": 1, "mesh": "m.ply", "cameras": [], "lights": [], "photos": [{"file": "a.png", "camera": "c", "lights": [], "exposure": true}]}`, "photos[0].exposure", 1, 0, "a number or"},
		{"deep", strings.Repeat("[", 100) + strings.Repeat("]", 100), "", 1, 0, "nesting deeper"},
		{"empty", "", "", 1, 1, "unexpected end"},
	}
	for _, c := range cases {
		_, err := Parse([]byte(c.src), "/x/capture.json")
		var ce *Error
		if !errors.As(err, &ce) {
			t.Errorf("%s: error %v, want *Error", c.name, err)
			continue
		}
		found := false
		for _, p := range ce.Problems {
			if p.Path == c.path && strings.Contains(p.Msg, c.msg) && p.Line == c.line && (c.col == 0 || p.Col == c.col) {
				found = true
			}
		}
		if !found {
			t.Errorf("%s: want %d:%d %s: ...%s..., got\n%v", c.name, c.line, c.col, c.path, c.msg, ce)
		}
	}
}

func TestByteOrderMark(t *testing.T) {
	data := append([]byte("\xef\xbb\xbf"), mustRead(t, fixtureCaptureFile)...)
	if _, err := Parse(data, filepath.Join(fixtureDir, "x.json")); err != nil {
		t.Error(err)
	}
}

func TestUnknownFieldWarning(t *testing.T) {
	src := strings.Replace(string(mustRead(t, fixtureCaptureFile)), `"use": "holdout"`, `"use": "holdout", "exposre": 3`, 1)
	c, err := Parse([]byte(src), filepath.Join(fixtureDir, "x.json"))
	if err != nil {
		t.Fatal(err)
	}
	probs := c.Validate()
	if !hasProblem(probs, "photos[3].exposre", `did you mean "exposure"?`) || Errors(probs) != 0 {
		t.Errorf("problems %v", probs)
	}
}

// Validate finds every semantic problem, each at its JSON path.
func TestValidateProblems(t *testing.T) {
	cases := []struct {
		name   string
		modify func(c *Capture)
		path   string
		msg    string
	}{
		{"bad up", func(c *Capture) { c.Up = "z" }, "up", "not one of"},
		{"unknown camera", func(c *Capture) { c.Photos[1].Camera = "nrth" }, "photos[1].camera", `no camera "nrth"; did you mean "north"?`},
		{"unknown light", func(c *Capture) { c.Photos[0].Lights = []string{"kye"} }, "photos[0].lights[0]", `did you mean "key"?`},
		{"duplicate camera", func(c *Capture) { c.Cameras[1].ID = "north" }, "cameras[1].id", "already used"},
		{"duplicate light", func(c *Capture) { c.Lights[2].ID = "key" }, "lights[2].id", "already used"},
		{"scaled rotation", func(c *Capture) { c.Cameras[0].Rotation[0][0] *= 1.001 }, "cameras[0].rotation", "not orthonormal"},
		{"reflection", func(c *Capture) {
			for i := 0; i < 3; i++ {
				c.Cameras[1].Rotation[i][0] = -c.Cameras[1].Rotation[i][0]
			}
		}, "cameras[1].rotation", "determinant -1"},
		{"rotation within tolerance", func(c *Capture) { c.Cameras[0].Rotation[0][0] += 1e-7 }, "", ""},
		{"negative fx", func(c *Capture) { c.Cameras[0].Fx = -95 }, "cameras[0].fx", "must be positive"},
		{"principal point", func(c *Capture) { c.Cameras[1].Cx = 64 }, "cameras[1].cx", "outside the image"},
		{"size mismatch", func(c *Capture) { c.Cameras[0].Width, c.Cameras[0].Cx = 80, 40 }, "photos[0].file", "is 64x48 pixels but camera \"north\" is 80x48"},
		{"negative intensity", func(c *Capture) { c.Lights[1].Intensity[2] = -0.1 }, "lights[1].intensity[2]", "negative"},
		{"NaN irradiance", func(c *Capture) { c.Lights[2].Irradiance[0] = math.NaN() }, "lights[2].irradiance[0]", "not finite"},
		{"zero direction", func(c *Capture) { c.Lights[2].Direction = [3]float64{} }, "lights[2].direction", "zero vector"},
		{"no fit photo", func(c *Capture) {
			for i := range c.Photos {
				c.Photos[i].Use = UseHoldout
			}
		}, "photos", `no photo has use "fit"`},
		{"missing photo", func(c *Capture) { c.Photos[3].File = "photos/missing.png" }, "photos[3].file", "does not exist"},
		{"missing mesh", func(c *Capture) { c.Mesh = "mesh/none.ply" }, "mesh", "does not exist"},
		{"empty segment", func(c *Capture) { l := 7; c.Segments[1].Label = &l }, "segments[1]", "has no triangles"},
		{"unknown model", func(c *Capture) { c.Segments[0].Model = "metall" }, "segments[0].model", `did you mean "metal"?`},
		{"levels", func(c *Capture) { c.Photos[2].BlackLevel = 0.97 }, "photos[2].white_level", "not above the black level"},
		{"exposure", func(c *Capture) { c.Photos[2].Exposure = Exposure{Scale: -1} }, "photos[2].exposure", "must be positive"},
		{"encoding", func(c *Capture) { c.Photos[0].Encoding = "sRGB" }, "photos[0].encoding", `did you mean "srgb"?`},
		{"mask size", func(c *Capture) { c.Photos[3].Mask = "masks/north.png"; c.Cameras[1].Height = 40; c.Cameras[1].Cy = 20 }, "photos[3].mask", "40"},
		{"no lights", func(c *Capture) { c.Photos[0].Lights = nil }, "photos[0].lights", "lists no lights"},
	}
	for _, tc := range cases {
		c := loadFixture(t)
		tc.modify(c)
		probs := c.Validate()
		if tc.path == "" && tc.msg == "" {
			if Errors(probs) != 0 {
				t.Errorf("%s: unexpected errors %v", tc.name, probs)
			}
			continue
		}
		if !hasProblem(probs, tc.path, tc.msg) {
			t.Errorf("%s: want %s: ...%s..., got %v", tc.name, tc.path, tc.msg, probs)
		}
		for _, p := range probs {
			if p.Path == tc.path && p.Line == 0 {
				t.Errorf("%s: problem without a line: %v", tc.name, p)
			}
		}
	}
}

// Every problem is reported, not just the first.
func TestValidateReportsAll(t *testing.T) {
	c := loadFixture(t)
	c.Photos[0].Camera = "nowhere"
	c.Lights[0].Intensity[0] = -1
	c.Cameras[1].Fy = 0
	probs := c.Validate()
	if Errors(probs) < 3 {
		t.Errorf("got %v", probs)
	}
}

func TestSegmentIndex(t *testing.T) {
	obj := &render.Mesh{
		Indices:       []uint32{0, 1, 2, 0, 2, 3, 0, 3, 1},
		Positions:     []float32{0, 0, 0, 1, 0, 0, 0, 1, 0, 0, 0, 1},
		Segments:      []int32{0, 1, 2},
		SegmentLabels: []render.SegmentLabel{{Label: -1, Name: "glaze"}, {Label: -1, Name: "gold"}, {Label: -1, Name: "base"}},
	}
	c := &Capture{Segments: []Segment{{Name: "gold", Model: ModelMetal}, {Name: "glaze", Model: ModelDielectric}}}
	idx, err := c.SegmentIndex(obj)
	if err != nil || !reflect.DeepEqual(idx, []int{1, 0, -1}) {
		t.Errorf("OBJ names: %v %v", idx, err)
	}
	tri, _ := c.TriangleSegments(obj)
	if !reflect.DeepEqual(tri, []int32{1, 0, -1}) {
		t.Errorf("triangle segments %v", tri)
	}
	// No capture segments: one default segment per mesh label.
	d := &Capture{}
	segs := d.EffectiveSegments(obj)
	if len(segs) != 3 || segs[2].Name != "base" || segs[2].Model != ModelDielectric {
		t.Errorf("defaults %+v", segs)
	}
	if idx, _ := d.SegmentIndex(obj); !reflect.DeepEqual(idx, []int{0, 1, 2}) {
		t.Errorf("default index %v", idx)
	}
	ply := &render.Mesh{SegmentLabels: []render.SegmentLabel{{Label: 3}, {Label: 5}}}
	if segs := d.EffectiveSegments(ply); segs[1].Name != "segment 5" || *segs[1].Label != 5 {
		t.Errorf("PLY defaults %+v", segs)
	}
	three, five := 3, 5
	e := &Capture{Segments: []Segment{{Name: "a", Label: &five}, {Name: "b", Label: &five}, {Name: "c", Label: &three}}}
	if _, err := e.SegmentIndex(ply); err == nil {
		t.Error("two segments claiming label 5 not refused")
	}
}

func TestSkipFiles(t *testing.T) {
	c := loadFixture(t)
	c.Mesh = "/nonexistent/mesh.ply"
	_, probs := c.Check(CheckOptions{SkipFiles: true})
	if Errors(probs) != 0 {
		t.Errorf("SkipFiles still opened files: %v", probs)
	}
}
