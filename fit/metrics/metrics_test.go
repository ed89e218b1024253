package metrics

import (
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"reflect"
	"strings"
	"testing"

	"patina/render/colour"
	"patina/render/refcheck"
)

// skimageScript computes the reference metrics of each job in the JSON list
// in argv[1] (render and photo as float32 RGB files, h x w x 3) with
// scikit-image (Debian python3-skimage): peak_signal_noise_ratio with an
// explicit data_range, and structural_similarity with gaussian_weights=True,
// sigma=1.5, use_sample_covariance=False, data_range=1 on the sRGB-encoded
// luminance. The encoding is written out in numpy from IEC 61966-2-1 and
// CIELAB from CIE 15, independently of Patina's code; Delta E 2000 is
// scikit-image's deltaE_ciede2000 and the statistics numpy's. A job's "rect"
// (x0, y0, x1, y1) selects a sub-rectangle to compare instead of the whole
// image. All jobs run in one interpreter: starting Python dominates.
const skimageScript = `
import json, sys
import numpy as np
from skimage.metrics import peak_signal_noise_ratio, structural_similarity
from skimage.color import deltaE_ciede2000
def enc(v):
    v = np.clip(v, 0, 1)
    return np.where(v <= 0.0031308, 12.92 * v, 1.055 * np.power(v, 1 / 2.4) - 0.055)
results = []
for job in json.loads(sys.argv[1]):
    w, h = job["w"], job["h"]
    render = np.fromfile(job["render"], dtype="<f4").astype(np.float64).reshape(h, w, 3)
    photo = np.fromfile(job["photo"], dtype="<f4").astype(np.float64).reshape(h, w, 3)
    if job["rect"]:
        x0, y0, x1, y1 = job["rect"]
        render, photo = render[y0:y1, x0:x1], photo[y0:y1, x0:x1]
    peak = job["peak"]
    M = np.array(job["matrix"])
    def lum(v):
        return enc((v @ M[1]) / peak)
    def lab(v):
        xyz = (v / peak) @ M.T
        t = xyz / np.array(job["white"])
        f = np.where(t > 216 / 24389, np.cbrt(t), (24389 / 27 * t + 16) / 116)
        return np.stack([116 * f[..., 1] - 16, 500 * (f[..., 0] - f[..., 1]), 200 * (f[..., 1] - f[..., 2])], axis=-1)
    de = deltaE_ciede2000(lab(photo), lab(render)).ravel()
    results.append({
        "psnr_linear": peak_signal_noise_ratio(photo, render, data_range=peak),
        "psnr_srgb": peak_signal_noise_ratio(enc(photo / peak), enc(render / peak), data_range=1),
        "ssim": structural_similarity(lum(photo), lum(render), gaussian_weights=True, sigma=1.5,
                                      use_sample_covariance=False, data_range=1),
        "de_mean": float(np.mean(de)), "de_median": float(np.median(de)),
        "de_p95": float(np.percentile(de, 95)), "de_max": float(np.max(de)),
    })
print(json.dumps(results))
`

type skimageRef struct {
	PSNRLinear float64 `json:"psnr_linear"`
	PSNRSRGB   float64 `json:"psnr_srgb"`
	SSIM       float64 `json:"ssim"`
	DEMean     float64 `json:"de_mean"`
	DEMedian   float64 `json:"de_median"`
	DEP95      float64 `json:"de_p95"`
	DEMax      float64 `json:"de_max"`
}

type skimageJob struct {
	pair *testPair
	peak float64
	rect []int
}

func runSkimage(t *testing.T, jobs []skimageJob) []skimageRef {
	t.Helper()
	dir := t.TempDir()
	var list []map[string]any
	for k, j := range jobs {
		list = append(list, map[string]any{
			"render": writeFloats(t, dir, fmt.Sprintf("render%d.f32", k), j.pair.render),
			"photo":  writeFloats(t, dir, fmt.Sprintf("photo%d.f32", k), j.pair.photo),
			"w":      j.pair.w, "h": j.pair.h, "peak": j.peak, "rect": j.rect,
			"matrix": colour.RGBToXYZMatrix(), "white": colour.D65,
		})
	}
	arg, _ := json.Marshal(list)
	out := refcheck.RunPython(t, skimageScript, string(arg))
	var ref []skimageRef
	if err := json.Unmarshal(out, &ref); err != nil || len(ref) != len(jobs) {
		t.Fatalf("reading scikit-image output (%v):\n%s", err, out)
	}
	return ref
}

func near(a, b, tol float64) bool { return math.Abs(a-b) <= tol*(1+math.Abs(b)) }

// Whole images, no mask: PSNR, SSIM (with the border excluded as
// scikit-image does) and the Delta E 2000 statistics against scikit-image
// and numpy, to 1e-6.
func TestCompareAgainstSkimage(t *testing.T) {
	refcheck.RequirePython(t, map[string]string{"skimage": "python3-skimage", "numpy": "python3-numpy"})
	cases := []struct {
		w, h int
		seed uint64
		peak float64
	}{{64, 48, 1, 1}, {97, 61, 2, 0.8}, {200, 150, 3, 1.3}, {31, 200, 4, 0.5}}
	var jobs []skimageJob
	for _, tc := range cases {
		jobs = append(jobs, skimageJob{makePair(tc.w, tc.h, tc.seed, false), tc.peak, nil})
	}
	refs := runSkimage(t, jobs)
	for k, tc := range cases {
		t.Run(fmt.Sprintf("%dx%d", tc.w, tc.h), func(t *testing.T) {
			p, ref := jobs[k].pair, refs[k]
			res, _, err := Compare(p.render, p.photo, p.w, p.h, nil, nil, nil, Options{Peak: tc.peak, SSIMExcludeBorder: true, NoImages: true})
			if err != nil {
				t.Fatal(err)
			}
			for _, c := range []struct {
				name      string
				got, want float64
			}{
				{"PSNR linear (skimage peak_signal_noise_ratio)", res.PSNRLinear, ref.PSNRLinear},
				{"PSNR sRGB (skimage peak_signal_noise_ratio)", res.PSNRSRGB, ref.PSNRSRGB},
				{"SSIM (skimage structural_similarity)", res.SSIM, ref.SSIM},
				{"mean dE00 (skimage deltaE_ciede2000, numpy mean)", res.DE2000Mean, ref.DEMean},
				{"median dE00 (numpy median)", res.DE2000Median, ref.DEMedian},
				{"p95 dE00 (numpy percentile)", res.DE2000P95, ref.DEP95},
				{"max dE00 (numpy max)", res.DE2000Max, ref.DEMax},
			} {
				if !near(c.got, c.want, 1e-6) {
					t.Errorf("%s: Patina %.10g, reference %.10g", c.name, c.got, c.want)
				}
			}
			if res.Pixels != p.w*p.h {
				t.Errorf("Pixels %d, want %d", res.Pixels, p.w*p.h)
			}
		})
	}
}

// The masking rule: where the whole 11 x 11 window of a pixel is valid, the
// masked SSIM is the published one. A valid rectangle with garbage around it
// is compared; its inner part (5 pixels in from the rectangle's edge, a
// segment of its own) must match scikit-image on the rectangle cut out, which
// averages exactly those pixels.
func TestMaskedSSIMMatchesSkimageInside(t *testing.T) {
	refcheck.RequirePython(t, map[string]string{"skimage": "python3-skimage", "numpy": "python3-numpy"})
	p := makePair(120, 90, 9, false)
	x0, y0, x1, y1 := 17, 11, 101, 80
	for y := 0; y < p.h; y++ {
		for x := 0; x < p.w; x++ {
			i := y*p.w + x
			p.valid[i] = x >= x0 && x < x1 && y >= y0 && y < y1
			p.segment[i] = -1
			if p.valid[i] {
				p.segment[i] = 1 // the ring
				if x >= x0+ssimRadius && x < x1-ssimRadius && y >= y0+ssimRadius && y < y1-ssimRadius {
					p.segment[i] = 0
				}
			} else {
				p.render[3*i] = float32(math.Inf(1))
				p.photo[3*i+2] = 1e6
			}
		}
	}
	res, _, err := Compare(p.render, p.photo, p.w, p.h, p.valid, p.segment, []string{"inner", "ring"}, Options{Peak: 1, NoImages: true})
	if err != nil {
		t.Fatal(err)
	}
	ref := runSkimage(t, []skimageJob{{p, 1, []int{x0, y0, x1, y1}}})[0]
	if len(res.Segments) != 2 || res.Segments[0].Name != "inner" {
		t.Fatalf("segments %+v", res.Segments)
	}
	if got := res.Segments[0].SSIM; !near(got, ref.SSIM, 1e-6) {
		t.Errorf("SSIM inside the mask %.10g, scikit-image on the rectangle %.10g", got, ref.SSIM)
	}
	if res.Pixels != (x1-x0)*(y1-y0) {
		t.Errorf("Pixels %d, want %d", res.Pixels, (x1-x0)*(y1-y0))
	}
	// PSNR over the valid rectangle equals scikit-image on it.
	if !near(res.PSNRLinear, ref.PSNRLinear, 1e-6) || !near(res.PSNRSRGB, ref.PSNRSRGB, 1e-6) {
		t.Errorf("PSNR %v / %v, scikit-image on the rectangle %v / %v", res.PSNRLinear, res.PSNRSRGB, ref.PSNRLinear, ref.PSNRSRGB)
	}
	if !near(res.DE2000Mean, ref.DEMean, 1e-6) || !near(res.DE2000P95, ref.DEP95, 1e-6) {
		t.Errorf("dE00 mean %v p95 %v, reference %v %v", res.DE2000Mean, res.DE2000P95, ref.DEMean, ref.DEP95)
	}
}

// Values of pixels that are not compared must not matter at all.
func TestInvalidPixelsIgnored(t *testing.T) {
	p := makePair(80, 60, 5, true)
	opt := Options{Peak: 1, NoImages: true}
	r1, m1, err := Compare(p.render, p.photo, p.w, p.h, p.valid, p.segment, nil, opt)
	if err != nil {
		t.Fatal(err)
	}
	for i, v := range p.valid {
		if !v {
			p.render[3*i+1] = float32(math.NaN())
			p.photo[3*i] = -1e30
		}
	}
	r2, m2, err := Compare(p.render, p.photo, p.w, p.h, p.valid, p.segment, nil, opt)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(r1, r2) {
		t.Errorf("results depend on invalid pixels:\n%+v\n%+v", r1, r2)
	}
	for i := range m1.DeltaE {
		if !(m1.DeltaE[i] == m2.DeltaE[i] || (m1.DeltaE[i] != m1.DeltaE[i] && m2.DeltaE[i] != m2.DeltaE[i])) {
			t.Fatalf("DeltaE map differs at %d", i)
		}
	}
}

// Same bytes for any number of threads (ARCHITECTURE.md: determinism).
func TestDeterministicAcrossThreads(t *testing.T) {
	p := makePair(150, 170, 6, true)
	var first []byte
	for _, th := range []int{1, 2, 3, 8} {
		r, m, err := Compare(p.render, p.photo, p.w, p.h, p.valid, p.segment, []string{"a", "b", "c", "d"}, Options{Threads: th})
		if err != nil {
			t.Fatal(err)
		}
		b, err := json.Marshal(r)
		if err != nil {
			t.Fatal(err)
		}
		b = append(b, m.Strip.Pix...)
		b = append(b, m.DeltaLImage.Pix...)
		if first == nil {
			first = b
		} else if string(b) != string(first) {
			t.Errorf("threads=%d gives different bytes", th)
		}
	}
}

// Segment metrics are the metrics of the segment's pixels on their own:
// a segment's PSNR and Delta E statistics equal those of Compare run with
// only that segment's pixels valid (SSIM differs: its windows see the
// neighbours).
func TestSegmentsMatchSubsets(t *testing.T) {
	p := makePair(90, 70, 8, true)
	res, _, err := Compare(p.render, p.photo, p.w, p.h, p.valid, p.segment, []string{"left", "middle", "right", "bottom", "unused"}, Options{Peak: 0.9, NoImages: true})
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Segments) != 4 {
		t.Fatalf("%d segments, want 4 (the unused one omitted)", len(res.Segments))
	}
	total := 0
	for _, s := range res.Segments {
		only := make([]bool, len(p.valid))
		for i := range only {
			only[i] = p.valid[i] && p.segment[i] == int32(s.Index)
		}
		sub, _, err := Compare(p.render, p.photo, p.w, p.h, only, nil, nil, Options{Peak: 0.9, NoImages: true})
		if err != nil {
			t.Fatal(err)
		}
		if sub.Pixels != s.Pixels || !near(sub.PSNRLinear, s.PSNRLinear, 1e-12) || !near(sub.PSNRSRGB, s.PSNRSRGB, 1e-12) ||
			!near(sub.DE2000Mean, s.DE2000Mean, 1e-12) || sub.DE2000Median != s.DE2000Median || sub.DE2000P95 != s.DE2000P95 || sub.DE2000Max != s.DE2000Max {
			t.Errorf("segment %s: %+v, alone %+v", s.Name, s, sub)
		}
		total += s.Pixels
	}
	if total != res.Pixels {
		t.Errorf("segments hold %d pixels, image %d", total, res.Pixels)
	}
	if r := res.Segments[2]; r.DE2000Mean < 1.4*res.Segments[0].DE2000Mean {
		t.Errorf("the wrongly fitted segment should stand out: %v vs %v", r.DE2000Mean, res.Segments[0].DE2000Mean)
	}
}

func TestIdenticalImagesAndJSON(t *testing.T) {
	p := makePair(40, 30, 3, true)
	res, _, err := Compare(p.photo, p.photo, p.w, p.h, p.valid, p.segment, nil, Options{NoImages: true})
	if err != nil {
		t.Fatal(err)
	}
	if !math.IsInf(res.PSNRLinear, 1) || !math.IsInf(res.PSNRSRGB, 1) || math.Abs(res.SSIM-1) > 1e-12 || res.DE2000Max != 0 {
		t.Errorf("identical images: %+v", res)
	}
	b, err := json.Marshal(res)
	if err != nil {
		t.Fatal(err)
	}
	var keys map[string]any
	if err := json.Unmarshal(b, &keys); err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{"psnr_linear", "psnr_srgb", "ssim", "de2000_mean", "de2000_median", "de2000_p95", "de2000_max", "pixels", "segments", "linear_peak"} {
		if _, ok := keys[k]; !ok {
			t.Errorf("JSON lacks %q: %s", k, b)
		}
	}
	if keys["psnr_linear"] != nil {
		t.Errorf("infinite PSNR should be null in JSON, got %v", keys["psnr_linear"])
	}
	seg := keys["segments"].([]any)[0].(map[string]any)
	for _, k := range []string{"index", "name", "psnr_linear", "ssim", "de2000_p95", "pixels"} {
		if _, ok := seg[k]; !ok {
			t.Errorf("segment JSON lacks %q", k)
		}
	}
	var back Result
	if err := json.Unmarshal(b, &back); err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(&back, res) {
		t.Errorf("JSON round trip:\n%+v\n%+v", back, *res)
	}
}

// The default peak is the 99.9th percentile of the photo's max(R, G, B).
func TestDefaultPeak(t *testing.T) {
	p := makePair(50, 40, 4, true)
	res, _, err := Compare(p.render, p.photo, p.w, p.h, p.valid, nil, nil, Options{NoImages: true})
	if err != nil {
		t.Fatal(err)
	}
	var v []float64
	for i, ok := range p.valid {
		if ok {
			v = append(v, float64(max(p.photo[3*i], p.photo[3*i+1], p.photo[3*i+2])))
		}
	}
	if want := sortedPercentile(v, 99.9); res.Peak != want {
		t.Errorf("default peak %v, want %v", res.Peak, want)
	}
}

func TestCompareErrors(t *testing.T) {
	p := makePair(20, 10, 1, false)
	nanValid := append([]float32(nil), p.render...)
	nanValid[3*(3*20+4)+1] = float32(math.NaN())
	badSeg := append([]int32(nil), p.segment...)
	badSeg[25] = 7
	none := make([]bool, 200)
	cases := []struct {
		name    string
		render  []float32
		w, h    int
		valid   []bool
		seg     []int32
		names   []string
		opt     Options
		wantErr string
	}{
		{"zero width", p.render, 0, 10, nil, nil, nil, Options{}, "width and height"},
		{"too large", p.render, 1 << 20, 1 << 20, nil, nil, nil, Options{}, "exceeds the limit"},
		{"short render", p.render[:30], 20, 10, nil, nil, nil, Options{}, "render has 30 values"},
		{"short mask", p.render, 20, 10, make([]bool, 5), nil, nil, Options{}, "valid mask has 5"},
		{"NaN in a valid pixel", nanValid, 20, 10, nil, nil, nil, Options{}, "render pixel (4, 3) channel 1"},
		{"segment beyond names", p.render, 20, 10, nil, badSeg, []string{"a", "b", "c", "d"}, Options{}, "pixel (5, 1): index 7"},
		{"negative peak", p.render, 20, 10, nil, nil, nil, Options{Peak: -1}, "Options.Peak"},
		{"negative threads", p.render, 20, 10, nil, nil, nil, Options{Threads: -2}, "Options.Threads"},
	}
	for _, c := range cases {
		_, _, err := Compare(c.render, p.photo, c.w, c.h, c.valid, c.seg, c.names, c.opt)
		var ie *InputError
		if !errors.As(err, &ie) || !strings.Contains(err.Error(), c.wantErr) {
			t.Errorf("%s: error %v, want an InputError containing %q", c.name, err, c.wantErr)
		}
	}
	if _, _, err := Compare(p.render, p.photo, 20, 10, none, nil, nil, Options{}); !errors.Is(err, ErrNoPixels) {
		t.Errorf("no valid pixels: %v, want ErrNoPixels", err)
	}
	black := make([]float32, 600)
	if _, _, err := Compare(black, black, 20, 10, nil, nil, nil, Options{}); err == nil || !strings.Contains(err.Error(), "Options.Peak") {
		t.Errorf("black photo with the default peak: %v", err)
	}
}

// TestTinyAndDenormalPeaks: the metrics depend only on the images relative
// to the peak, so scaling both images by 1e-9 (a peak near 2.6e-9, the
// fuzz case) or by 1e-38 (float32 subnormal values) must give the same
// statistics as the unscaled pair; a zero peak and values beyond
// MaxRelative times the peak are errors naming the place, never NaN.
func TestTinyAndDenormalPeaks(t *testing.T) {
	p := makePair(48, 36, 9, true)
	ref, _, err := Compare(p.render, p.photo, p.w, p.h, p.valid, p.segment, nil, Options{NoImages: true})
	if err != nil {
		t.Fatal(err)
	}
	for _, k := range []float64{1e-8, 1e-38} {
		r, ph := make([]float32, len(p.render)), make([]float32, len(p.photo))
		for i := range r {
			r[i], ph[i] = float32(float64(p.render[i])*k), float32(float64(p.photo[i])*k)
		}
		got, _, err := Compare(r, ph, p.w, p.h, p.valid, p.segment, nil, Options{NoImages: true})
		if err != nil {
			t.Fatalf("scale %g: %v", k, err)
		}
		// Subnormal float32 keep fewer significant bits: looser at 1e-38.
		tol := 1e-4
		if k < 1e-30 {
			tol = 0.05
		}
		a, b := ref.Stats(), got.Stats()
		for _, c := range []struct {
			name string
			x, y float64
		}{{"mean", a.DE2000Mean, b.DE2000Mean}, {"p95", a.DE2000P95, b.DE2000P95}, {"PSNR", a.PSNRSRGB, b.PSNRSRGB}, {"SSIM", a.SSIM, b.SSIM}} {
			if math.IsNaN(c.y) || math.Abs(c.x-c.y) > tol*math.Max(1, math.Abs(c.x)) {
				t.Errorf("scale %g (peak %g): %s %v, unscaled %v", k, got.Peak, c.name, c.y, c.x)
			}
		}
	}
	zero := make([]float32, 3*4*3)
	if _, _, err := Compare(zero, zero, 4, 3, nil, nil, nil, Options{}); err == nil || !strings.Contains(err.Error(), "Options.Peak") {
		t.Errorf("zero peak: %v, want an error naming Options.Peak", err)
	}
	photo := []float32{2.6e-9, 2.6e-9, 2.6e-9, 2.6e-9, 2.6e-9, 2.6e-9}
	render := []float32{1e-9, 2e-9, 3e-9, 0, -3e38, 0}
	var ie *InputError
	if _, _, err := Compare(render, photo, 2, 1, nil, nil, nil, Options{}); !errors.As(err, &ie) || !strings.Contains(err.Error(), "render pixel (1, 0) channel 1") {
		t.Errorf("value 1e47 times the peak: %v, want an InputError naming render pixel (1, 0) channel 1", err)
	}
	// The same pixel left out of the comparison is ignored.
	if _, _, err := Compare(render, photo, 2, 1, []bool{true, false}, nil, nil, Options{}); err != nil {
		t.Errorf("out-of-range value in an invalid pixel: %v", err)
	}
}
