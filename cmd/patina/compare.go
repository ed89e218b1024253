package main

import (
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"image"
	"image/png"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"

	"patina/assets/atomicfile"
	"patina/assets/capture"
	"patina/assets/hdr"
	"patina/assets/materials"
	"patina/assets/mesh"
	"patina/assets/photo"
	"patina/fit/metrics"
	"patina/fit/report"
)

const compareUsage = `patina compare -render R -photo P [-mask M] [-scale S] [-o PREFIX] [-json] [-tolerance NAME]
patina compare -capture C.json -photo-id N -materials M.json [-spp N] [-depth D] [-seed S]
       [-o PREFIX] [-json] [-tolerance NAME] [-threads N]

Compares a render with a photograph of the same view, pixel for pixel:
PSNR on linear and on sRGB-encoded values, SSIM (Wang et al. 2004) and the
CIEDE2000 colour difference (mean, median, 95th percentile, maximum), for
the whole image and, with a capture, per segment; then judges the result
against a colour-accuracy tolerance and prints the tolerance with its
source.

Two aligned images: -render R and -photo P, each a linear .hdr or .pfm, or a
.png, .tif or .jpg decoded with the sRGB curve. -scale multiplies the render
(for example by a materials file's radiometric scale). The compared pixels
are those inside -mask M (white = compare) where no channel of the photo is
saturated.

A photo of a capture: -capture C.json -photo-id N (an index or a file name
as the capture lists it) renders that photo's view under its lights with the
materials of -materials, on the fit's radiometric scale, and compares it
with the photo where the mesh is seen, the photo's mask keeps the pixel and
nothing is saturated. -spp 0 (default) chooses the samples per pixel so that
the render's noise stays below half the photo's own, each pixel stopping
once its own noise is low enough (see 'patina help report'); -depth (default 4) bounds the bounces; -seed picks the random
sequence.

With -o PREFIX the maps are written (atomically) as PREFIX-deltae.png (the
Delta E 2000 map with its legend), PREFIX-deltal.png (the signed lightness
difference) and PREFIX-strip.png (photo | simulation | map). With -json the
metrics are printed as one JSON object with the keys psnr_linear, psnr_srgb,
ssim, de2000_mean, de2000_median, de2000_p95, de2000_max, pixels and
segments (a list of the same per segment, with index and name); the verdict
then goes to stderr. An infinite PSNR (identical images) is null.

Tolerances (-tolerance, default fadgi-3star):
%s`

func init() {
	register(&command{
		name:    "compare",
		summary: "compare a render with a photo (or a capture photo with a fresh render): PSNR, SSIM, Delta E 2000, maps",
		usage:   fmt.Sprintf(compareUsage, toleranceList()),
		run:     runCompare,
	})
}

// compareStats are the -json keys of one set of pixels; a nil PSNR or SSIM
// is written as null (infinite PSNR of identical images, SSIM over none).
type compareStats struct {
	PSNRLinear   *float64 `json:"psnr_linear"`
	PSNRSRGB     *float64 `json:"psnr_srgb"`
	SSIM         *float64 `json:"ssim"`
	DE2000Mean   float64  `json:"de2000_mean"`
	DE2000Median float64  `json:"de2000_median"`
	DE2000P95    float64  `json:"de2000_p95"`
	DE2000Max    float64  `json:"de2000_max"`
	Pixels       int      `json:"pixels"`
}

type compareSegment struct {
	Index int    `json:"index"`
	Name  string `json:"name"`
	compareStats
}

type compareJSON struct {
	compareStats
	Segments []compareSegment `json:"segments"`
}

func finitePtr(v float64) *float64 {
	if math.IsInf(v, 0) || math.IsNaN(v) {
		return nil
	}
	return &v
}

func statsJSON(s metrics.Stats) compareStats {
	return compareStats{PSNRLinear: finitePtr(s.PSNRLinear), PSNRSRGB: finitePtr(s.PSNRSRGB), SSIM: finitePtr(s.SSIM),
		DE2000Mean: s.DE2000Mean, DE2000Median: s.DE2000Median, DE2000P95: s.DE2000P95, DE2000Max: s.DE2000Max, Pixels: s.Pixels}
}

// loadCompareImage reads a linear .hdr/.pfm, or any photo format decoded
// with the sRGB curve; saturated marks the clipped pixels of the latter.
func loadCompareImage(path string) (pix []float32, w, h int, saturated []bool, err error) {
	switch strings.ToLower(filepath.Ext(path)) {
	case ".hdr", ".pic", ".pfm":
		img, err := hdr.ReadFile(path)
		if err != nil {
			return nil, 0, 0, nil, err
		}
		if err := img.CheckFinite(); err != nil {
			return nil, 0, 0, nil, fmt.Errorf("%s: %w", path, err)
		}
		return img.Pix, img.Width, img.Height, nil, nil
	}
	img, err := photo.Load(path, photo.Decoding{Encoding: capture.EncodingSRGB})
	if err != nil {
		return nil, 0, 0, nil, err
	}
	return img.Pix, img.Width, img.Height, img.Saturated, nil
}

func runCompare(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("compare", flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() { fmt.Fprintf(stderr, compareUsage+"\n", toleranceList()) }
	renderPath := fs.String("render", "", "render image (.hdr, .pfm, .png, .tif)")
	photoPath := fs.String("photo", "", "photo image (.hdr, .pfm, .png, .tif, .jpg)")
	maskPath := fs.String("mask", "", "mask image: white pixels are compared")
	scale := fs.Float64("scale", 1, "factor applied to the render's values")
	capPath := fs.String("capture", "", "capture file")
	photoID := fs.String("photo-id", "", "photo of the capture: index or file name")
	matPath := fs.String("materials", "", "materials file (with -capture)")
	spp := fs.Int("spp", 0, "samples per pixel of the render (0: noise rule)")
	depth := fs.Int("depth", report.DefaultMaxDepth, "largest number of scattering events")
	seed := fs.Uint64("seed", 1, "random seed of the render")
	threads := fs.Int("threads", 0, "worker threads (0: all cores)")
	prefix := fs.String("o", "", "write the maps as PREFIX-deltae.png, PREFIX-deltal.png, PREFIX-strip.png")
	asJSON := fs.Bool("json", false, "print the metrics as one JSON object")
	tolName := fs.String("tolerance", metrics.FADGI3Star.Name, "tolerance preset")
	pos, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(pos) > 0 {
		return badInputf("compare: unexpected argument %q (see 'patina help compare')", pos[0])
	}
	tol, err := metrics.PresetByName(*tolName)
	if err != nil {
		return badInput(fmt.Errorf("compare: -tolerance: %w", err))
	}
	if *threads < 0 {
		return badInputf("compare: -threads %d: expected >= 0", *threads)
	}
	// Fail before the work, not after it, when the maps cannot be written.
	if *prefix != "" {
		if st, err := os.Stat(filepath.Dir(*prefix)); err != nil || !st.IsDir() {
			return badInputf("compare: -o %s: the directory %s does not exist", *prefix, filepath.Dir(*prefix))
		}
	}

	var res *metrics.Result
	var maps *metrics.Maps
	var what string
	switch {
	case *capPath != "":
		if *renderPath != "" || *photoPath != "" || *maskPath != "" {
			return badInputf("compare: -capture renders the photo's view itself; it does not take -render, -photo or -mask")
		}
		if *photoID == "" || *matPath == "" {
			return badInputf("compare: -capture needs -photo-id N and -materials M.json")
		}
		if *seed == 0 {
			return badInputf("compare: -seed 0: expected a seed of 1 or more")
		}
		opts := report.Options{SPP: *spp, MaxDepth: *depth, Seed: *seed, Threads: *threads, Tolerance: tol}
		if *depth <= 0 {
			return badInputf("compare: -depth %d: expected 1..1024", *depth)
		}
		if err := opts.Check(); err != nil {
			return badInput(fmt.Errorf("compare: %w", err))
		}
		ho, err := compareCapturePhoto(ctx, *capPath, *photoID, *matPath, opts, stderr)
		if err != nil {
			return err
		}
		res, maps = ho.Result, ho.Maps
		spp := fmt.Sprintf("%d spp", ho.Sampler.SPP)
		if ho.Sampler.Adaptive {
			spp = fmt.Sprintf("%.1f spp on average, %d..%d", ho.Sampler.MeanSPP, ho.Sampler.PixelMinSPP, ho.Sampler.SPP)
		}
		what = fmt.Sprintf("photo %d (%s) of %s against a simulation of its view (%s, seed %d, at most %d bounces)",
			ho.Photo, ho.File, *capPath, spp, ho.Seed, ho.MaxDepth)
	default:
		if *renderPath == "" || *photoPath == "" {
			return badInputf("compare: give -render R and -photo P, or -capture C -photo-id N -materials M (see 'patina help compare')")
		}
		if *photoID != "" || *matPath != "" {
			return badInputf("compare: -photo-id and -materials need -capture")
		}
		if !(*scale > 0) || math.IsInf(*scale, 0) {
			return badInputf("compare: -scale %v: expected a finite factor > 0", *scale)
		}
		rpix, rw, rh, _, err := loadCompareImage(*renderPath)
		if err != nil {
			return badInput(err)
		}
		ppix, pw, ph, sat, err := loadCompareImage(*photoPath)
		if err != nil {
			return badInput(err)
		}
		if rw != pw || rh != ph {
			return badInputf("compare: %s is %dx%d but %s is %dx%d: the images must be aligned pixel for pixel", *renderPath, rw, rh, *photoPath, pw, ph)
		}
		var valid []bool
		if *maskPath != "" {
			if valid, err = photo.LoadMask(*maskPath, pw, ph); err != nil {
				return badInput(err)
			}
		}
		if sat != nil {
			if valid == nil {
				valid = make([]bool, pw*ph)
				for i := range valid {
					valid[i] = true
				}
			}
			for i, s := range sat {
				if s {
					valid[i] = false
				}
			}
		}
		if *scale != 1 {
			for i := range rpix {
				rpix[i] *= float32(*scale)
			}
		}
		res, maps, err = metrics.Compare(rpix, ppix, pw, ph, valid, nil, nil, metrics.Options{Threads: *threads})
		if err != nil {
			var ie *metrics.InputError
			if errors.As(err, &ie) || errors.Is(err, metrics.ErrNoPixels) {
				return badInput(fmt.Errorf("compare: %s vs %s: %w", *renderPath, *photoPath, err))
			}
			return err
		}
		what = fmt.Sprintf("render %s against photo %s", *renderPath, *photoPath)
	}

	verdict := tol.Verdict(res)
	if *asJSON {
		out := compareJSON{compareStats: statsJSON(res.Stats()), Segments: []compareSegment{}}
		for i := range res.Segments {
			s := &res.Segments[i]
			out.Segments = append(out.Segments, compareSegment{Index: s.Index, Name: s.Name, compareStats: statsJSON(s.Stats())})
		}
		b, err := json.Marshal(out)
		if err != nil {
			return err
		}
		fmt.Fprintf(stdout, "%s\n", b)
		printVerdict(stderr, verdict)
	} else {
		printMetrics(stdout, what, res, maps)
		printVerdict(stdout, verdict)
	}
	if *prefix != "" {
		written, err := writeMaps(*prefix, maps)
		if err != nil {
			return err
		}
		w := stdout
		if *asJSON {
			w = stderr
		}
		fmt.Fprintf(w, "wrote %s\n", strings.Join(written, ", "))
	}
	return nil
}

// compareCapturePhoto renders and compares photo id of the capture.
func compareCapturePhoto(ctx context.Context, capPath, id, matPath string, opts report.Options, stderr io.Writer) (*report.Holdout, error) {
	c, err := capture.Load(capPath)
	if err != nil {
		return nil, badInput(err)
	}
	if ps := c.Validate(); capture.Errors(ps) > 0 {
		return nil, badInput(&capture.Error{File: capPath, Problems: ps})
	}
	pi, err := findPhoto(c, id)
	if err != nil {
		return nil, badInput(fmt.Errorf("compare: %s: %w", capPath, err))
	}
	if u := c.Photos[pi].Use; u != capture.UseHoldout {
		if u == "" {
			u = capture.UseFit
		}
		fmt.Fprintf(stderr, "patina compare: note: photo %d (%s) has use %q, not holdout: the fit may have seen it, so this is not an independent check\n", pi, c.Photos[pi].File, u)
	}
	m, _, err := mesh.Load(c.Resolve(c.Mesh))
	if err != nil {
		return nil, badInput(err)
	}
	mf, err := materials.Load(matPath)
	if err != nil {
		return nil, badInput(err)
	}
	setup, err := report.NewSetup(c, m, mf, opts.Threads)
	if err != nil {
		return nil, badInput(err)
	}
	ho, err := setup.CompareHoldout(ctx, pi, 0, 1, opts)
	if err != nil {
		var ie *report.InputError
		if errors.As(err, &ie) {
			return nil, badInput(err)
		}
		return nil, err
	}
	return ho, nil
}

func printMetrics(w io.Writer, what string, r *metrics.Result, maps *metrics.Maps) {
	fmt.Fprintf(w, "Compared %s\n", what)
	fmt.Fprintf(w, "  %dx%d pixels, %d compared; linear white %.4g\n", maps.Width, maps.Height, r.Pixels, r.Peak)
	line := func(name string, s metrics.Stats) {
		fmt.Fprintf(w, "  %-14s %8d px  PSNR linear %s  sRGB %s  SSIM %.4f  dE00 mean %.2f  median %.2f  p95 %.2f  max %.2f\n",
			name, s.Pixels, dB(s.PSNRLinear), dB(s.PSNRSRGB), s.SSIM, s.DE2000Mean, s.DE2000Median, s.DE2000P95, s.DE2000Max)
	}
	line("whole image", r.Stats())
	for i := range r.Segments {
		s := &r.Segments[i]
		name := s.Name
		if name == "" {
			name = fmt.Sprintf("segment %d", s.Index)
		}
		line(name, s.Stats())
	}
}

func dB(v float64) string {
	if math.IsInf(v, 1) {
		return "     inf"
	}
	return fmt.Sprintf("%5.2f dB", v)
}

func printVerdict(w io.Writer, v metrics.Verdict) {
	fmt.Fprintln(w, v.String())
	for _, l := range v.SegmentLines() {
		fmt.Fprintf(w, "  %s\n", l)
	}
}

// writeMaps writes the three map images of a comparison.
func writeMaps(prefix string, maps *metrics.Maps) ([]string, error) {
	items := []struct {
		suffix string
		img    image.Image
	}{{"-deltae.png", maps.DeltaEImage}, {"-deltal.png", maps.DeltaLImage}, {"-strip.png", maps.Strip}}
	var written []string
	for _, it := range items {
		if it.img == nil {
			continue
		}
		p := prefix + it.suffix
		if err := atomicfile.Write(p, 0o644, func(w io.Writer) error { return png.Encode(w, it.img) }); err != nil {
			return written, err
		}
		written = append(written, p)
	}
	return written, nil
}
