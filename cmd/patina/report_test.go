package main

import (
	"context"
	"encoding/json"
	"image/png"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strings"
	"testing"
	"time"

	"patina/assets/demo"
	"patina/assets/hdr"
	"patina/assets/materials"
	"patina/brdf"
	"patina/render/refcheck"
)

// fixtureMaterials writes plausible materials for testdata/jar-small (its
// README's true values) and returns the capture and materials paths.
func fixtureMaterials(t *testing.T, dir string) (capPath, matPath string) {
	t.Helper()
	capPath, _ = filepath.Abs(filepath.Join("..", "..", "testdata", "jar-small", "capture.json"))
	rmse := 0.003
	glaze := materials.FromParams("glaze", brdf.Params{Kind: brdf.Dielectric, Diffuse: brdf.RGB{0.55, 0.30, 0.18}, Specular: brdf.RGB{0.04, 0.04, 0.04}, Roughness: 0.35})
	glaze.RMSE = &rmse
	mf := &materials.File{Version: materials.Version, Capture: capPath, Segments: []materials.Segment{glaze,
		materials.FromParams("gilding", brdf.Params{Kind: brdf.Metal, Specular: brdf.RGB{0.95, 0.77, 0.37}, Roughness: 0.3}),
		materials.FromParams("grey card", brdf.Params{Kind: brdf.Dielectric, Diffuse: brdf.RGB{0.18, 0.18, 0.18}, Specular: brdf.RGB{0, 0, 0}, Roughness: 1}),
	}, Fit: &materials.FitInfo{Optimizer: "lbfgs", Passes: 3, RadiometricScale: 1, Rejections: map[string]int{"border": 10}}}
	matPath = filepath.Join(dir, "materials.json")
	if err := mf.Save(matPath); err != nil {
		t.Fatal(err)
	}
	return capPath, matPath
}

// TestReportFixture writes the report of the fixture and verifies the
// checksum file with GNU coreutils' sha256sum.
func TestReportFixture(t *testing.T) {
	dir := t.TempDir()
	capPath, matPath := fixtureMaterials(t, dir)
	out := filepath.Join(dir, "report.html")
	code, stdout, stderr := runCLI(t, "report", capPath, "-materials", matPath, "-o", out, "-tolerance", "metamorfoze", "-progress", "never")
	if code != 0 {
		t.Fatalf("exit %d\n%s\n%s", code, stdout, stderr)
	}
	for _, want := range []string{"east-fill-sky.png", "against metamorfoze", "Metamorfoze", "sha256 ", "report.json"} {
		if !strings.Contains(stdout, want) {
			t.Errorf("stdout lacks %q:\n%s", want, stdout)
		}
	}
	if !strings.Contains(stderr, "1/1 photos/east-fill-sky.png: render") {
		t.Errorf("no progress on stderr:\n%s", stderr)
	}
	var rep struct {
		CommandLine []string `json:"command_line"`
		Tolerance   struct{ Name string }
		Holdouts    []struct {
			Verdict struct{ Text string }
		}
	}
	b, err := os.ReadFile(filepath.Join(dir, "report.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &rep); err != nil {
		t.Fatal(err)
	}
	if rep.Tolerance.Name != "metamorfoze" || len(rep.Holdouts) != 1 || strings.Join(rep.CommandLine[:3], " ") != "patina report "+capPath {
		t.Errorf("report.json: %+v", rep)
	}
	page, _ := os.ReadFile(out)
	if !strings.Contains(string(page), rep.Holdouts[0].Verdict.Text[:20]) {
		t.Error("the page lacks the verdict")
	}
	// sha256sum -c (GNU coreutils) checks both files against the checksum file.
	sum := refcheck.RequireCommand(t, "sha256sum", "coreutils")
	cmd := exec.Command(sum, "-c", "report.sha256")
	cmd.Dir = dir
	if o, err := cmd.CombinedOutput(); err != nil || strings.Count(string(o), ": OK") != 2 {
		t.Errorf("sha256sum -c: %v\n%s", err, o)
	}
}

// TestReportBadInput: usage and input errors exit 2 and write nothing.
func TestReportBadInput(t *testing.T) {
	dir := t.TempDir()
	capPath, matPath := fixtureMaterials(t, dir)
	out := filepath.Join(dir, "r.html")
	cases := [][]string{
		{"report", capPath, "-o", out},
		{"report", capPath, "-materials", matPath, "-o", out, "-tolerance", "nope"},
		{"report", capPath, "-materials", filepath.Join(dir, "missing.json"), "-o", out},
		{"report", filepath.Join(dir, "missing.json"), "-materials", matPath, "-o", out},
		{"report", capPath, "-materials", matPath, "-o", filepath.Join(dir, "no", "such", "dir", "r.html")},
		{"report", capPath, "-materials", matPath, "-o", filepath.Join(dir, "r.json")},
		{"report", capPath, "-materials", matPath, "-o", out, "-spp", "-3"},
		{"report", capPath, "-materials", matPath, "-o", out, "-pixel-min-spp", "1"},
		{"report", capPath, "-materials", matPath, "-o", out, "-pixel-min-spp", "70000"},
	}
	for _, args := range cases {
		code, _, stderr := runCLI(t, args...)
		if code != 2 {
			t.Errorf("%v: exit %d, want 2 (%s)", args, code, stderr)
		}
	}
	if _, err := os.Stat(out); err == nil {
		t.Error("a failed report left a page behind")
	}
}

// writeHDR writes a w x h image of one colour.
func writeHDR(t *testing.T, path string, w, h int, rgb [3]float32) {
	t.Helper()
	img := hdr.NewImage(w, h)
	for i := 0; i < w*h; i++ {
		copy(img.Pix[3*i:3*i+3], rgb[:])
	}
	if err := hdr.WriteFile(path, img); err != nil {
		t.Fatal(err)
	}
}

// TestCompareImagesJSON checks the -json object's keys and the PSNR of a
// uniform 10 % error against the definition 10 log10(peak^2 / MSE): with
// the peak at the photo's value 0.5, every channel is off by 0.1 of the
// peak, so the linear PSNR is exactly 20 dB.
func TestCompareImagesJSON(t *testing.T) {
	dir := t.TempDir()
	r, p := filepath.Join(dir, "r.pfm"), filepath.Join(dir, "p.pfm")
	writeHDR(t, r, 40, 30, [3]float32{0.55, 0.55, 0.55})
	writeHDR(t, p, 40, 30, [3]float32{0.5, 0.5, 0.5})
	code, stdout, stderr := runCLI(t, "compare", "-render", r, "-photo", p, "-json", "-tolerance", "jnd")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	var obj map[string]any
	if err := json.Unmarshal([]byte(stdout), &obj); err != nil {
		t.Fatalf("%v: %s", err, stdout)
	}
	var keys []string
	for k := range obj {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	want := "de2000_max de2000_mean de2000_median de2000_p95 pixels psnr_linear psnr_srgb segments ssim"
	if strings.Join(keys, " ") != want {
		t.Errorf("keys %v, want exactly %s", keys, want)
	}
	if v := obj["psnr_linear"].(float64); math.Abs(v-20) > 1e-4 {
		t.Errorf("psnr_linear %v, want 20 dB", v)
	}
	if obj["pixels"].(float64) != 40*30 {
		t.Errorf("pixels %v", obj["pixels"])
	}
	if !strings.Contains(stderr, "against jnd") || !strings.Contains(stderr, "just-noticeable") {
		t.Errorf("the verdict with its tolerance is not on stderr: %s", stderr)
	}
	// Identical images: infinite PSNR is null.
	code, stdout, _ = runCLI(t, "compare", "-render", p, "-photo", p, "-json")
	if code != 0 || !strings.Contains(stdout, `"psnr_linear":null`) {
		t.Errorf("identical images: exit %d, %s", code, stdout)
	}
	// Sizes that differ are bad input.
	writeHDR(t, r, 41, 30, [3]float32{0.5, 0.5, 0.5})
	if code, _, _ := runCLI(t, "compare", "-render", r, "-photo", p); code != 2 {
		t.Errorf("different sizes: exit %d, want 2", code)
	}
	if code, _, _ := runCLI(t, "compare", "-render", r); code != 2 {
		t.Errorf("no photo: exit %d, want 2", code)
	}
	if code, _, _ := runCLI(t, "compare", "-render", p, "-photo", p, "-o", filepath.Join(dir, "missing", "x")); code != 2 {
		t.Errorf("-o into a missing directory: exit %d, want 2", code)
	}
}

// TestCompareCapturePhoto renders the fixture's holdout view and writes the
// three maps.
func TestCompareCapturePhoto(t *testing.T) {
	dir := t.TempDir()
	capPath, matPath := fixtureMaterials(t, dir)
	prefix := filepath.Join(dir, "east")
	code, stdout, stderr := runCLI(t, "compare", "-capture", capPath, "-photo-id", "east-fill-sky.png", "-materials", matPath, "-o", prefix, "-spp", "16")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	for _, want := range []string{"whole image", "glaze", "gilding", "grey card", "against fadgi-3star", "FADGI", "16 spp"} {
		if !strings.Contains(stdout, want) {
			t.Errorf("stdout lacks %q:\n%s", want, stdout)
		}
	}
	for _, s := range []string{"-deltae.png", "-deltal.png", "-strip.png"} {
		f, err := os.Open(prefix + s)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := png.Decode(f); err != nil {
			t.Errorf("%s: %v", s, err)
		}
		f.Close()
	}
	// A fitting photo is compared too, with a note that it is not independent.
	code, _, stderr = runCLI(t, "compare", "-capture", capPath, "-photo-id", "0", "-materials", matPath, "-spp", "16")
	if code != 0 || !strings.Contains(stderr, "not holdout") {
		t.Errorf("fit photo: exit %d, %s", code, stderr)
	}
	if code, _, _ := runCLI(t, "compare", "-capture", capPath, "-photo-id", "9", "-materials", matPath); code != 2 {
		t.Errorf("photo out of range: exit %d, want 2", code)
	}
}

// TestReportDemo is the whole job on the small demo capture: generate,
// fit, report. It takes minutes on a busy machine, so -short skips it.
func TestReportDemo(t *testing.T) {
	if testing.Short() {
		t.Skip("generates, fits and reports the demo capture (minutes)")
	}
	dir := t.TempDir()
	ctx, cancel := context.WithTimeout(context.Background(), 15*time.Minute)
	defer cancel()
	res, err := demo.Generate(ctx, filepath.Join(dir, "demo"), demo.Options{Size: demo.Small})
	if err != nil {
		t.Fatal(err)
	}
	mat := filepath.Join(dir, "materials.json")
	if code, _, stderr := runCLI(t, "fit", res.Capture, "-o", mat); code != 0 {
		t.Fatalf("fit: exit %d: %s", code, stderr)
	}
	out := filepath.Join(dir, "report.html")
	code, stdout, stderr := runCLI(t, "report", res.Capture, "-materials", mat, "-o", out, "-progress", "never")
	if code != 0 {
		t.Fatalf("report: exit %d: %s", code, stderr)
	}
	t.Log(stdout)
	var rep struct {
		Holdouts []struct {
			Metrics struct {
				Mean float64 `json:"de2000_mean"`
			}
		}
	}
	b, _ := os.ReadFile(filepath.Join(dir, "report.json"))
	if err := json.Unmarshal(b, &rep); err != nil {
		t.Fatal(err)
	}
	if len(rep.Holdouts) != res.Holdout {
		t.Errorf("%d holdouts reported, the demo has %d", len(rep.Holdouts), res.Holdout)
	}
	for i, h := range rep.Holdouts {
		// The demo's fit recovers the materials well enough that a held-out
		// view stays within a few just-noticeable differences on average.
		if !(h.Metrics.Mean < 5) {
			t.Errorf("holdout %d: mean dE00 %.2f", i, h.Metrics.Mean)
		}
	}
}
