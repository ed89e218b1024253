package report

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/base64"
	"encoding/hex"
	"encoding/json"
	"errors"
	"image/png"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"regexp"
	"sort"
	"strings"
	"testing"

	"patina/assets/capture"
	"patina/assets/materials"
	"patina/brdf"
	"patina/fit/metrics"
)

// The jar-small fixture's true materials (testdata/jar-small/README.md).
func jarSmallTruth() []materials.Segment {
	rmse := 0.004
	glaze := materials.FromParams("glaze", brdf.Params{Kind: brdf.Dielectric, Diffuse: brdf.RGB{0.55, 0.30, 0.18}, Specular: brdf.RGB{0.04, 0.04, 0.04}, Roughness: 0.35})
	glaze.Sigma = &materials.Sigma{Diffuse: [3]float64{0.01, 0.008, 0.006}, Specular: [3]float64{0.003, 0.003, 0.003}, Roughness: 0.02}
	glaze.RMSE, glaze.Observations, glaze.NearSpecular = &rmse, 900, 60
	gilt := materials.FromParams("gilding", brdf.Params{Kind: brdf.Metal, Specular: brdf.RGB{0.95, 0.77, 0.37}, Roughness: 0.30})
	gilt.Warnings = []string{"roughness is poorly constrained: few near-specular observations"}
	card := materials.FromParams("grey card", brdf.Params{Kind: brdf.Dielectric, Diffuse: brdf.RGB{0.18, 0.18, 0.18}, Specular: brdf.RGB{0, 0, 0}, Roughness: 1})
	return []materials.Segment{glaze, gilt, card}
}

// writeMaterials writes a materials file for the jar-small fixture into dir.
func writeMaterials(t testing.TB, dir string, segs []materials.Segment) string {
	t.Helper()
	capPath, err := filepath.Abs("../../testdata/jar-small/capture.json")
	if err != nil {
		t.Fatal(err)
	}
	f := &materials.File{Version: materials.Version, Capture: capPath, Segments: segs,
		Fit: &materials.FitInfo{Optimizer: "lbfgs", Loss: "test", Passes: 12, Seconds: 0.5, RadiometricScale: 1, Seed: 7,
			Rejections: map[string]int{"border": 120, "saturated": 14, "shadow": 300}}}
	p := filepath.Join(dir, "materials.json")
	if err := f.Save(p); err != nil {
		t.Fatal(err)
	}
	return p
}

const jarSmall = "../../testdata/jar-small/capture.json"

func writeMaterialsB(b *testing.B, dir string) string { return writeMaterials(b, dir, jarSmallTruth()) }

// TestPhotoNoiseKnownSigma checks the noise estimate on a shaded ramp with
// Gaussian noise of known deviation: Immerkaer's operator (CVIU 1996, from
// memory) cancels the linear ramp, and the median absolute value of a
// Gaussian is 0.6745 sigma (standard statistics).
func TestPhotoNoiseKnownSigma(t *testing.T) {
	w, h := 200, 150
	for _, sigma := range []float64{0.001, 0.01, 0.05} {
		rng := rand.New(rand.NewPCG(1, uint64(sigma*1e6)))
		pix := make([]float32, 3*w*h)
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				base := 0.2 + 0.002*float64(x) + 0.001*float64(y)
				for c := 0; c < 3; c++ {
					pix[3*(y*w+x)+c] = float32(base*(1+0.1*float64(c)) + sigma*rng.NormFloat64())
				}
			}
		}
		got := PhotoNoise(pix, w, h, nil)
		if math.Abs(got/sigma-1) > 0.03 {
			t.Errorf("sigma %g: estimate %g (%.1f%% off)", sigma, got, 100*(got/sigma-1))
		}
	}
	// Only pixels whose 3x3 neighbourhood is valid count: noise confined to
	// invalid pixels must not be seen.
	pix := make([]float32, 3*w*h)
	valid := make([]bool, w*h)
	rng := rand.New(rand.NewPCG(2, 3))
	for i := range valid {
		valid[i] = i%w < w/2
		if !valid[i] {
			for c := 0; c < 3; c++ {
				pix[3*i+c] = float32(rng.NormFloat64())
			}
		}
	}
	if got := PhotoNoise(pix, w, h, valid); got != 0 {
		t.Errorf("noise outside the valid pixels leaked into the estimate: %g", got)
	}
}

// TestChooseSPP checks the rule N = ceil(s^2 / (r sigma)^2) and its bounds.
func TestChooseSPP(t *testing.T) {
	cases := []struct {
		s2, sigma, ratio float64
		min, max         int
		spp, wanted      int
	}{
		{s2: 1e-4, sigma: 0.005, ratio: 0.5, min: 16, max: 256, spp: 16, wanted: 16},    // 1e-4 / 6.25e-6 = 16
		{s2: 1.1e-4, sigma: 0.005, ratio: 0.5, min: 4, max: 256, spp: 18, wanted: 18},   // 17.6, rounded up
		{s2: 1e-2, sigma: 0.005, ratio: 0.5, min: 16, max: 256, spp: 256, wanted: 1600}, // capped
		{s2: 1e-8, sigma: 0.005, ratio: 0.5, min: MinSPP, max: 256, spp: MinSPP, wanted: MinSPP},
		{s2: 1e-8, sigma: 0.005, ratio: 0.5, min: 4, max: 256, spp: 4, wanted: 4},
		{s2: 1e-4, sigma: 0, ratio: 0.5, min: 16, max: 64, spp: 64, wanted: 65},
		{s2: 1e-8, sigma: 0.005, ratio: 0.5, min: 16, max: 8, spp: 8, wanted: 16}, // the cap wins
	}
	for _, c := range cases {
		spp, wanted := chooseSPP(c.s2, c.sigma, c.ratio, c.min, c.max)
		if spp != c.spp || wanted != c.wanted {
			t.Errorf("chooseSPP(%g, %g, %g, %d, %d) = %d, %d; want %d, %d", c.s2, c.sigma, c.ratio, c.min, c.max, spp, wanted, c.spp, c.wanted)
		}
	}
}

// TestChooseSPPCounts: with the pilot's error measured at several counts,
// the rule's N is the smallest whose own measurement (the largest count at
// most N) meets the target; worked by hand, target variance
// (0.5 x 0.005)^2 = 6.25e-6.
func TestChooseSPPCounts(t *testing.T) {
	counts := []int{4, 8}
	cases := []struct {
		s2          []float64
		sigma       float64
		min, max    int
		spp, wanted int
	}{
		{s2: []float64{1e-4, 1e-4}, sigma: 0.005, min: 2, max: 64, spp: 16, wanted: 16},   // 16 from the count 8
		{s2: []float64{1e-5, 1e-5}, sigma: 0.005, min: 2, max: 64, spp: 2, wanted: 2},     // 1.6 from the count 4
		{s2: []float64{1e-4, 3e-5}, sigma: 0.005, min: 2, max: 64, spp: 8, wanted: 8},     // 16 from 4 is past 8; 4.8 from 8, so 8
		{s2: []float64{4e-5, 1e-4}, sigma: 0.005, min: 2, max: 64, spp: 7, wanted: 7},     // 6.4 from the count 4
		{s2: []float64{4e-5, 1e-4}, sigma: 0.005, min: 16, max: 64, spp: 16, wanted: 16},  // the floor
		{s2: []float64{1e-2, 1e-2}, sigma: 0.005, min: 2, max: 64, spp: 64, wanted: 1600}, // capped
		{s2: []float64{1e-4, 1e-4}, sigma: 0, min: 2, max: 64, spp: 64, wanted: 65},       // no photo noise
	}
	for _, c := range cases {
		spp, wanted := chooseSPPCounts(counts, c.s2, c.sigma, 0.5, c.min, c.max)
		if spp != c.spp || wanted != c.wanted {
			t.Errorf("chooseSPPCounts(%v, %v, %g, 0.5, %d, %d) = %d, %d; want %d, %d", counts, c.s2, c.sigma, c.min, c.max, spp, wanted, c.spp, c.wanted)
		}
	}
	for _, c := range []struct{ n, want int }{{1, 0}, {4, 0}, {7, 0}, {8, 1}, {100, 1}} {
		if got := pilotCount(counts, c.n); got != c.want {
			t.Errorf("pilotCount(%v, %d) = %d, want %d", counts, c.n, got, c.want)
		}
	}
}

// buildJarSmall builds the report of the fixture with the given materials.
func buildJarSmall(t *testing.T, segs []materials.Segment, opts Options) (*Report, string) {
	t.Helper()
	dir := t.TempDir()
	mat := writeMaterials(t, dir, segs)
	r, err := Build(context.Background(), jarSmall, mat, opts, Provenance{Program: "patina", Version: "test", Revision: "abc123",
		CommandLine: []string{"patina", "report", jarSmall, "-materials", mat}})
	if err != nil {
		t.Fatal(err)
	}
	return r, dir
}

// TestHoldoutTruthBeatsWrongMaterials renders the fixture's holdout view
// with its true materials and with a wrong glaze colour: the photo was made
// by an independent ray tracer in the capture package's tests (brute force,
// 3x3 samples per pixel, direct light), so the true materials must agree
// closely and the wrong ones must not.
func TestHoldoutTruthBeatsWrongMaterials(t *testing.T) {
	opts := Options{SPP: 32, Threads: 2}
	good, _ := buildJarSmall(t, jarSmallTruth(), opts)
	wrong := jarSmallTruth()
	wrong[0].Diffuse = [3]float64{0.25, 0.40, 0.55}
	bad, _ := buildJarSmall(t, wrong, opts)
	if len(good.Holdouts) != 1 || len(bad.Holdouts) != 1 {
		t.Fatalf("holdouts: %d and %d, want 1", len(good.Holdouts), len(bad.Holdouts))
	}
	g, b := good.Holdouts[0].Metrics, bad.Holdouts[0].Metrics
	t.Logf("truth: mean dE00 %.3f p95 %.3f PSNR %.2f SSIM %.4f over %d px; wrong glaze: mean %.3f", g.DE2000Mean, g.DE2000P95, g.PSNRSRGB, g.SSIM, g.Pixels, b.DE2000Mean)
	if g.Pixels < 300 {
		t.Errorf("only %d pixels compared", g.Pixels)
	}
	// A pixel-exact match is not expected (different samplers, noise, 8-bit
	// encoding, interreflection here and not there), but the true materials
	// should be within a few just-noticeable differences.
	if !(g.DE2000Mean < 3) {
		t.Errorf("true materials: mean dE00 %.3f, want < 3", g.DE2000Mean)
	}
	if !(b.DE2000Mean > 2*g.DE2000Mean) {
		t.Errorf("a wrong glaze colour should be far worse: %.3f vs %.3f", b.DE2000Mean, g.DE2000Mean)
	}
	var glazeGood, glazeBad float64
	for _, s := range g.Segments {
		if s.Name == "glaze" {
			glazeGood = s.DE2000Mean
		}
	}
	for _, s := range b.Segments {
		if s.Name == "glaze" {
			glazeBad = s.DE2000Mean
		}
	}
	if !(glazeBad > 2*glazeGood+2) {
		t.Errorf("glaze segment: wrong %.3f vs true %.3f", glazeBad, glazeGood)
	}
}

var dataURI = regexp.MustCompile(`data:image/png;base64,([A-Za-z0-9+/=]+)`)

// checkPage checks that every embedded picture decodes as PNG and that the
// verdict, the tolerance source and every hash of the record are present.
func checkPage(t *testing.T, page []byte, r *Report) {
	t.Helper()
	ms := dataURI.FindAllSubmatch(page, -1)
	if len(ms) != len(r.Images) || len(ms) < 5 {
		t.Errorf("%d embedded pictures, the record lists %d", len(ms), len(r.Images))
	}
	for i, m := range ms {
		b, err := base64.StdEncoding.DecodeString(string(m[1]))
		if err != nil {
			t.Fatalf("picture %d: base64: %v", i, err)
		}
		img, err := png.Decode(bytes.NewReader(b))
		if err != nil {
			t.Fatalf("picture %d: PNG: %v", i, err)
		}
		if img.Bounds().Dx() < 50 || img.Bounds().Dy() < 30 {
			t.Errorf("picture %d is only %v", i, img.Bounds())
		}
		sum := sha256.Sum256(b)
		if !bytes.Contains(page, []byte(hex.EncodeToString(sum[:]))) {
			t.Errorf("picture %d: its SHA-256 is not in the page", i)
		}
	}
	s := string(page)
	for _, want := range []string{r.Summary.Text[:4], "appearance record", r.Tolerance.Name, "SIMULATION", "Provenance", "abc123"} {
		if !strings.Contains(s, want) {
			t.Errorf("page lacks %q", want)
		}
	}
	if len(r.Inputs) < 4 {
		t.Errorf("only %d input files recorded", len(r.Inputs))
	}
	for _, in := range r.Inputs {
		if !strings.Contains(s, in.SHA256) {
			t.Errorf("input %s: SHA-256 missing from the page", in.Path)
		}
	}
	if strings.Contains(s, "http://") || strings.Contains(s, "https://") || strings.Contains(s, "<script") {
		t.Error("the page refers to something outside itself or runs a script")
	}
}

// TestReportFiles writes the report of the fixture and checks the page, the
// record and the checksum file against each other.
func TestReportFiles(t *testing.T) {
	r, dir := buildJarSmall(t, jarSmallTruth(), Options{SPP: 8, Threads: 2})
	htmlPath := filepath.Join(dir, "report.html")
	w, err := r.WriteFiles(htmlPath)
	if err != nil {
		t.Fatal(err)
	}
	page, err := os.ReadFile(htmlPath)
	if err != nil {
		t.Fatal(err)
	}
	checkPage(t, page, r)
	if r.Tolerance.Name != metrics.FADGI3Star.Name {
		t.Errorf("default tolerance %q, want %q", r.Tolerance.Name, metrics.FADGI3Star.Name)
	}
	// The inputs' hashes are those of the files (computed here independently).
	for _, in := range r.Inputs {
		b, err := os.ReadFile(in.Path)
		if err != nil {
			t.Fatal(err)
		}
		if sha256Hex(b) != in.SHA256 || int64(len(b)) != in.Bytes {
			t.Errorf("%s: recorded hash or size differs from the file's", in.Path)
		}
	}
	js, err := os.ReadFile(w.JSON)
	if err != nil {
		t.Fatal(err)
	}
	var back map[string]any
	if err := json.Unmarshal(js, &back); err != nil {
		t.Fatalf("report.json: %v", err)
	}
	for _, k := range []string{"patina_report", "title", "created", "program", "command_line", "capture", "materials", "settings", "tolerance", "holdouts", "summary", "inputs", "images", "outputs"} {
		if _, ok := back[k]; !ok {
			t.Errorf("report.json lacks %q", k)
		}
	}
	var rec Report
	if err := json.Unmarshal(js, &rec); err != nil {
		t.Fatal(err)
	}
	if rec.Outputs[0].SHA256 != sha256Hex(page) {
		t.Error("report.json's hash of the page is not the page's")
	}
	if rec.Holdouts[0].Metrics.DE2000Mean != r.Holdouts[0].Metrics.DE2000Mean {
		t.Error("metrics do not read back")
	}
	sums, err := os.ReadFile(w.Sums)
	if err != nil {
		t.Fatal(err)
	}
	want := sha256Hex(page) + "  report.html\n" + sha256Hex(js) + "  report.json\n"
	if string(sums) != want {
		t.Errorf("checksum file:\n%s\nwant\n%s", sums, want)
	}
}

// TestReportDeterministic: the same seed gives the same metrics on one
// thread and on two.
func TestReportDeterministic(t *testing.T) {
	a, _ := buildJarSmall(t, jarSmallTruth(), Options{Threads: 1, Seed: 5})
	b, _ := buildJarSmall(t, jarSmallTruth(), Options{Threads: 2, Seed: 5})
	ja, _ := json.Marshal(a.Holdouts)
	jb, _ := json.Marshal(b.Holdouts)
	// Timings differ; everything else must not.
	strip := regexp.MustCompile(`"(render|compare)_seconds":[0-9.e+-]+`)
	if !bytes.Equal(strip.ReplaceAll(ja, nil), strip.ReplaceAll(jb, nil)) {
		t.Errorf("holdout records differ between 1 and 2 threads:\n%s\n%s", ja, jb)
	}
	for i := range a.Images {
		if a.Images[i].SHA256 != b.Images[i].SHA256 && !strings.HasPrefix(a.Images[i].Name, "chart-") {
			t.Errorf("picture %s differs between thread counts", a.Images[i].Name)
		}
	}
	s := a.Holdouts[0].Sampling
	if !s.Automatic || s.SPP < MinSPP || s.PhotoNoise <= 0 || s.RenderNoise <= 0 {
		t.Errorf("automatic sampling not recorded: %+v", s)
	}
	t.Logf("automatic: %d spp (wanted %d), photo noise %.3g, render noise %.3g", s.SPP, s.WantedSPP, s.PhotoNoise, s.RenderNoise)
	if !s.Capped && s.RenderNoise > 1.5*s.Target*s.PhotoNoise {
		t.Errorf("render noise %.3g is not below the target %.2g x photo noise %.3g", s.RenderNoise, s.Target, s.PhotoNoise)
	}
}

// TestBadInputs: missing files and a capture without holdout photos give
// input errors naming the file.
func TestBadInputs(t *testing.T) {
	dir := t.TempDir()
	mat := writeMaterials(t, dir, jarSmallTruth())
	_, err := Build(context.Background(), filepath.Join(dir, "nope.json"), mat, Options{}, Provenance{})
	var ie *InputError
	if !errors.As(err, &ie) || !strings.Contains(err.Error(), "nope.json") {
		t.Errorf("missing capture: %v", err)
	}
	_, err = Build(context.Background(), jarSmall, filepath.Join(dir, "none.json"), Options{}, Provenance{})
	if !errors.As(err, &ie) || !strings.Contains(err.Error(), "none.json") {
		t.Errorf("missing materials: %v", err)
	}
	// Drop the holdout photo: nothing to prove against.
	c, err := capture.Load(jarSmall)
	if err != nil {
		t.Fatal(err)
	}
	for i := range c.Photos {
		c.Photos[i].Use = capture.UseFit
	}
	noHold := filepath.Join(dir, "capture.json")
	if err := c.Save(noHold); err != nil {
		t.Fatal(err)
	}
	_, err = Build(context.Background(), noHold, mat, Options{}, Provenance{})
	if !errors.As(err, &ie) || !strings.Contains(err.Error(), "holdout") {
		t.Errorf("no holdout photo: %v", err)
	}
	// A materials file missing a segment of the capture.
	mat2 := writeMaterials(t, t.TempDir(), jarSmallTruth()[:2])
	_, err = Build(context.Background(), jarSmall, mat2, Options{}, Provenance{})
	if !errors.As(err, &ie) || !strings.Contains(err.Error(), "grey card") {
		t.Errorf("materials without a segment: %v", err)
	}
	if err := (Options{SPP: -1}).Check(); err == nil {
		t.Error("negative spp accepted")
	}
}

// TestAutomaticEqualsFixed: with uniform sampling, stopping the render at
// the pass the noise rule picks gives the same pictures, byte for byte, as a render asked for that
// many samples from the start.
func TestAutomaticEqualsFixed(t *testing.T) {
	// A ratio at which the rule stops between passes on this fixture.
	var auto *Report
	n := 0
	for _, ratio := range []float64{1, 1.25, 1.5, 1.75, 2, 2.5, 3} {
		auto, _ = buildJarSmall(t, jarSmallTruth(), Options{Threads: 2, Seed: 3, NoiseRatio: ratio, MaxSPP: 128, Uniform: true})
		if n = auto.Holdouts[0].Sampling.SPP; n > MinSPP && n < 128 {
			break
		}
	}
	if n <= MinSPP || n >= 128 {
		t.Fatalf("no noise ratio made the rule stop between passes (last: %d spp)", n)
	}
	fixed, _ := buildJarSmall(t, jarSmallTruth(), Options{Threads: 2, Seed: 3, SPP: n})
	for i := range auto.Images {
		a, f := auto.Images[i], fixed.Images[i]
		if strings.HasPrefix(a.Name, "holdout-") && a.SHA256 != f.SHA256 {
			t.Errorf("%s differs between the automatic render (%d spp) and a fixed one", a.Name, n)
		}
	}
	t.Logf("%d spp (wanted %d)", n, auto.Holdouts[0].Sampling.WantedSPP)
}

// TestMedianAgainstSort: the quickselect median equals the middle of the
// sorted values (the mean of the two middle ones for an even count), on
// random, repeated, sorted and reversed inputs of many sizes.
func TestMedianAgainstSort(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for n := 1; n < 300; n += 7 {
		for kind := 0; kind < 4; kind++ {
			v := make([]float64, n)
			for i := range v {
				switch kind {
				case 0:
					v[i] = rng.Float64()
				case 1:
					v[i] = float64(rng.IntN(4))
				case 2:
					v[i] = float64(i)
				case 3:
					v[i] = float64(n - i)
				}
			}
			s := append([]float64(nil), v...)
			sort.Float64s(s)
			want := s[n/2]
			if n%2 == 0 {
				want = (s[n/2-1] + s[n/2]) / 2
			}
			if got := median(v); got != want {
				t.Fatalf("n %d kind %d: median %v, sorted %v", n, kind, got, want)
			}
		}
	}
}
