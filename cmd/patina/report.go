package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"

	"patina/fit/metrics"
	"patina/fit/report"
)

const reportUsage = `patina report CAPTURE.json -materials M.json [-o report.html] [-spp N] [-min-spp N] [-max-spp N]
       [-noise-ratio R] [-uniform] [-pixel-min-spp N] [-indirect-clamp F] [-depth D] [-tolerance NAME] [-seed S] [-threads N] [-progress auto|always|never]

Proves the materials file against the capture's holdout photos: renders the
view of every photo marked "holdout" under its lights with the fitted
materials, compares each render with its photo (PSNR, SSIM, Delta E 2000,
overall and per segment), judges the result against a colour-accuracy
tolerance, and writes one self-contained HTML page (pictures embedded) with
the capture, the materials and their uncertainties, the fit's diagnostics,
every comparison and a provenance section with the SHA-256 of every input.

Beside the page it writes the same facts as JSON (report.json for
report.html) and a checksum file (report.sha256, in sha256sum's format)
holding the SHA-256 of both. Every file is written atomically.

-spp 0 (the default) chooses the samples per pixel of each render so that
its noise is below -noise-ratio (default 0.5) times the photo's own on the
typical pixel: a pilot of eight independent renders of a few thousand
pixels measures the render's noise from the spread of each pixel's eight
means, the photo's is estimated with Immerkaer's operator, and the render
gets the samples the ratio needs, at least -min-spp (default 16) and at most
-max-spp (default 64; the page says when the cap bound). That count is each
pixel's most: a pixel stops sooner, after at least -pixel-min-spp samples
(default 4), once its own noise (or its neighbours', if larger) is below the
target; -uniform gives every pixel the full count.
-indirect-clamp F bounds what one path sample may add through two or more
scatterings to F times the photo's full scale (default 0.25; negative: no
clamp): caustic light that a photograph averages smoothly shows in a render
of few samples as rare bright specks, which would dominate its noise. Light
seen directly or after one scattering is never clamped.
-depth is the largest number of scattering events (default 4: direct and
indirect light). -seed selects the renders' random sequence: the same seed
gives the same pictures on any number of threads.

Tolerances (-tolerance, default fadgi-3star):
%s`

func init() {
	register(&command{
		name:    "report",
		summary: "render every holdout view, compare it with its photo and write an HTML and JSON report",
		usage:   fmt.Sprintf(reportUsage, toleranceList()),
		run:     runReport,
	})
}

// toleranceList describes the tolerance presets, one a line.
func toleranceList() string {
	var b strings.Builder
	for _, t := range metrics.Presets() {
		fmt.Fprintf(&b, "  %-12s %s\n", t.Name, t.Source)
	}
	return strings.TrimRight(b.String(), "\n")
}

// commandLine is the full command line of a subcommand for the provenance.
func commandLine(name string, args []string) []string {
	return append([]string{"patina", name}, args...)
}

// progressSink reports the progress of long work on stderr: a bar on a
// terminal, otherwise a line at each change of stage.
type progressSink struct {
	bar      *progressbar.ProgressBar
	w        io.Writer
	lastLine string
}

func newProgressSink(stderr io.Writer, mode, what string) (*progressSink, error) {
	show := mode == "always"
	switch mode {
	case "auto":
		if fd, ok := stderr.(*os.File); ok && term.IsTerminal(int(fd.Fd())) {
			show = true
		}
	case "always", "never":
	default:
		return nil, badInputf("-progress %q: expected auto, always or never", mode)
	}
	p := &progressSink{w: stderr}
	if show {
		p.bar = progressbar.NewOptions(1000,
			progressbar.OptionSetWriter(stderr),
			progressbar.OptionSetDescription(what),
			progressbar.OptionSetPredictTime(true),
			progressbar.OptionThrottle(100*time.Millisecond),
			progressbar.OptionClearOnFinish(),
		)
	}
	return p, nil
}

func (p *progressSink) update(pr report.Progress) {
	if p.bar != nil {
		p.bar.Describe(fmt.Sprintf("%s %d/%d %s", pr.Stage, pr.Photo, pr.Photos, filepath.Base(pr.File)))
		_ = p.bar.Set(int(1000 * pr.Fraction))
		return
	}
	line := fmt.Sprintf("  %d/%d %s: %s", pr.Photo, pr.Photos, pr.File, pr.Stage)
	if line != p.lastLine {
		fmt.Fprintln(p.w, line)
		p.lastLine = line
	}
}

func (p *progressSink) finish() {
	if p.bar != nil {
		_ = p.bar.Finish()
	}
}

func runReport(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("report", flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() { fmt.Fprintf(stderr, reportUsage+"\n", toleranceList()) }
	matPath := fs.String("materials", "", "materials file (required)")
	out := fs.String("o", "report.html", "HTML page to write; the JSON record and checksum file go beside it")
	spp := fs.Int("spp", 0, "samples per pixel (0: chosen by the noise rule)")
	maxSPP := fs.Int("max-spp", report.DefaultMaxSPP, "largest samples per pixel the noise rule may choose")
	minSPP := fs.Int("min-spp", report.MinSPP, "fewest samples per pixel the noise rule may choose")
	ratio := fs.Float64("noise-ratio", report.DefaultNoiseRatio, "wanted ratio of the render's noise to the photo's")
	uniform := fs.Bool("uniform", false, "give every pixel the noise rule's samples (no adaptive stopping)")
	pixelMin := fs.Int("pixel-min-spp", report.PixelMinSPP, "fewest samples of any pixel with adaptive stopping")
	clamp := fs.Float64("indirect-clamp", report.DefaultIndirectClamp, "bound on one sample's light of two or more scatterings, as a fraction of the photo's full scale (negative: none)")
	depth := fs.Int("depth", report.DefaultMaxDepth, "largest number of scattering events")
	tolName := fs.String("tolerance", metrics.FADGI3Star.Name, "tolerance preset")
	seed := fs.Uint64("seed", 1, "random seed of the renders")
	threads := fs.Int("threads", 0, "worker threads (0: all cores)")
	progress := fs.String("progress", "auto", "progress: auto (bar on a terminal), always or never")
	pos, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return badInputf("report: expected one capture file, got %d arguments (see 'patina help report')", len(pos))
	}
	if *matPath == "" {
		return badInputf("report: -materials M.json is required: the report proves a materials file against the capture's holdout photos")
	}
	tol, err := metrics.PresetByName(*tolName)
	if err != nil {
		return badInput(fmt.Errorf("report: -tolerance: %w", err))
	}
	if strings.EqualFold(filepath.Ext(*out), ".json") || filepath.Ext(*out) == "" {
		return badInputf("report: -o %s: expected an HTML file name like report.html (the JSON record is written beside it)", *out)
	}
	if *seed == 0 {
		return badInputf("report: -seed 0: expected a seed of 1 or more")
	}
	// Fail before the renders, not after them, when the page cannot be written.
	if st, err := os.Stat(filepath.Dir(*out)); err != nil || !st.IsDir() {
		return badInputf("report: -o %s: the directory %s does not exist", *out, filepath.Dir(*out))
	}
	opts := report.Options{SPP: *spp, MinSPP: *minSPP, MaxSPP: *maxSPP, NoiseRatio: *ratio, Uniform: *uniform, PixelMinSPP: *pixelMin, IndirectClamp: *clamp, MaxDepth: *depth, Seed: *seed, Threads: *threads, Tolerance: tol}
	if *minSPP < report.LowestMinSPP {
		return badInputf("report: -min-spp %d: expected %d..%d", *minSPP, report.LowestMinSPP, report.MaxSPPLimit)
	}
	if *pixelMin < report.LowestMinSPP {
		return badInputf("report: -pixel-min-spp %d: expected %d..%d", *pixelMin, report.LowestMinSPP, report.MaxSPPLimit)
	}
	if !(*ratio > 0) || math.IsInf(*ratio, 0) {
		return badInputf("report: -noise-ratio %v: expected a finite value above 0", *ratio)
	}
	if *clamp == 0 || math.IsNaN(*clamp) || math.IsInf(*clamp, 0) {
		return badInputf("report: -indirect-clamp %v: expected a finite fraction of full scale above 0, or negative for no clamp", *clamp)
	}
	if *depth <= 0 {
		return badInputf("report: -depth %d: expected 1..1024", *depth)
	}
	if *maxSPP <= 0 {
		return badInputf("report: -max-spp %d: expected 1..%d", *maxSPP, report.MaxSPPLimit)
	}
	if err := opts.Check(); err != nil {
		return badInput(fmt.Errorf("report: %w", err))
	}
	sink, err := newProgressSink(stderr, *progress, "report")
	if err != nil {
		return err
	}
	opts.Progress = sink.update
	fmt.Fprintf(stderr, "patina report: rendering the holdout views of %s\n", pos[0])
	prov := report.Provenance{Program: "patina", Version: Version, Revision: buildRevision(), CommandLine: commandLine("report", args)}
	rep, err := report.Build(ctx, pos[0], *matPath, opts, prov)
	sink.finish()
	if err != nil {
		var ie *report.InputError
		if errors.As(err, &ie) {
			return badInput(err)
		}
		return err
	}
	w, err := rep.WriteFiles(*out)
	if err != nil {
		return err
	}
	for i, h := range rep.Holdouts {
		spp := fmt.Sprintf("%d spp", h.Sampling.SPP)
		if h.Sampling.Adaptive {
			spp = fmt.Sprintf("%.1f spp (mean; %d..%d)", h.Sampling.MeanSPP, h.Sampling.PixelMinSPP, h.Sampling.SPP)
		}
		fmt.Fprintf(stdout, "%d. %s: %d px, %s, mean dE00 %.2f, p95 %.2f, max %.2f, PSNR sRGB %.2f dB, SSIM %.4f: %s\n",
			i+1, h.File, h.Metrics.Pixels, spp, h.Metrics.DE2000Mean, h.Metrics.DE2000P95, h.Metrics.DE2000Max,
			h.Metrics.PSNRSRGB, h.Metrics.SSIM, h.Verdict.Text)
	}
	fmt.Fprintln(stdout, rep.Summary.Text)
	fmt.Fprintf(stdout, "wrote %s (%s, %d pictures), %s and %s in %.1f s\n", w.HTML, humanBytes(int64(w.HTMLBytes)), w.Images, w.JSON, w.Sums, rep.Seconds)
	fmt.Fprintf(stdout, "  sha256 %s  %s\n  sha256 %s  %s\n", w.HTMLSHA256, filepath.Base(w.HTML), w.JSONSHA256, filepath.Base(w.JSON))
	return nil
}
