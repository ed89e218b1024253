package main

import (
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"

	"patina/assets/capture"
	"patina/assets/materials"
	"patina/assets/photo"
	"patina/brdf"
	"patina/fit"
)

const fitUsage = `patina fit CAPTURE.json [-o materials.json] [-locks M.json] [-optimizer lm|lbfgs|adam] [-samples N] [-seed S] [-threads N] [-json] [-progress auto|always|never]

Fits the reflectance of every segment of the capture to its "fit" photos and
writes the materials file (default: materials.json beside the capture), with
one-sigma uncertainties, observation counts and warnings per segment. Prints
the per-segment table (or, with -json, the result as JSON) at the end.

  -o FILE          materials file to write (default CAPTURE-DIR/materials.json)
  -locks FILE      a materials file whose segments list parameters under "locked"
                   (diffuse, specular, roughness): those are held at that file's
                   values during the fit, which estimates the others
  -optimizer NAME  lm (Levenberg-Marquardt, default), lbfgs or adam
  -samples N       observations per segment per photo, drawn stratified (default 4000; -1: all)
  -seed S          seed of the pixel sample (default 1)
  -threads N       goroutines (default: one per core)
  -json            print the result as JSON instead of the table
  -progress MODE   progress bar on stderr: auto (when a terminal), always, never`

func init() {
	register(&command{name: "fit", summary: "fit per-segment materials to the capture's photos", usage: fitUsage, run: runFit})
}

type fitFlags struct {
	out, optimizer, progress, locks string
	samples, threads                int
	seed                            uint64
	asJSON                          bool
}

func runFit(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("fit", flag.ContinueOnError)
	fs.SetOutput(stderr)
	var f fitFlags
	fs.StringVar(&f.out, "o", "", "materials file to write")
	fs.StringVar(&f.locks, "locks", "", "materials file whose locked parameters are held")
	fs.StringVar(&f.optimizer, "optimizer", "lm", "lm, lbfgs or adam")
	fs.IntVar(&f.samples, "samples", 4000, "observations per segment per photo (-1: all)")
	fs.Uint64Var(&f.seed, "seed", 1, "seed of the pixel sample")
	fs.IntVar(&f.threads, "threads", 0, "goroutines (0: one per core)")
	fs.BoolVar(&f.asJSON, "json", false, "print the result as JSON")
	fs.StringVar(&f.progress, "progress", "auto", "auto, always or never")
	fs.Usage = func() { fmt.Fprintln(stderr, fitUsage) }
	pos, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return badInputf("fit: expected one capture file, got %d arguments (see 'patina help fit')", len(pos))
	}
	opt, err := fit.ParseOptimizer(f.optimizer)
	if err != nil {
		return badInput(err)
	}
	if f.samples == 0 || f.samples < -1 {
		return badInputf("fit: -samples %d: expected a positive count, or -1 for every pixel", f.samples)
	}
	if f.threads < 0 {
		return badInputf("fit: -threads %d: expected >= 0", f.threads)
	}
	showBar := f.progress == "always"
	switch f.progress {
	case "auto":
		if fd, ok := stderr.(*os.File); ok && term.IsTerminal(int(fd.Fd())) {
			showBar = true
		}
	case "always", "never":
	default:
		return badInputf("fit: -progress %q: expected auto, always or never", f.progress)
	}

	capPath := pos[0]
	c, err := capture.Load(capPath)
	if err != nil {
		return badInput(err)
	}
	if ps := c.Validate(); capture.Errors(ps) > 0 {
		return badInput(&capture.Error{File: capPath, Problems: ps})
	}
	out := f.out
	if out == "" {
		out = filepath.Join(c.Dir, "materials.json")
	}

	opts := fit.Options{Optimizer: opt, Samples: f.samples, Seed: f.seed, Threads: f.threads}
	if f.locks != "" {
		if opts.Locks, err = readLocks(f.locks, c); err != nil {
			return badInput(err)
		}
	}
	if showBar {
		bar := progressbar.NewOptions(1000,
			progressbar.OptionSetWriter(stderr),
			progressbar.OptionSetDescription("fit"),
			progressbar.OptionSetPredictTime(false),
			progressbar.OptionShowElapsedTimeOnFinish(),
			progressbar.OptionThrottle(100*time.Millisecond),
			progressbar.OptionClearOnFinish(),
		)
		start := time.Now()
		opts.Progress = func(p fit.Progress) {
			bar.Describe(describeProgress(p, time.Since(start)))
			_ = bar.Set(int(math.Round(1000 * p.Fraction)))
		}
		defer bar.Finish()
	}
	res, err := fit.Run(ctx, c, opts)
	if err != nil {
		if ctx.Err() != nil {
			return ctx.Err()
		}
		var lk *fit.LockError
		if errors.As(err, &lk) {
			return badInputf("fit: -locks %s: %v", f.locks, err)
		}
		// A photo that passed the header checks but fails to decode is the
		// user's file, not an internal failure.
		var fe *photo.FormatError
		var ue *photo.UnsupportedError
		var le *photo.LimitError
		if errors.As(err, &fe) || errors.As(err, &ue) || errors.As(err, &le) {
			return badInput(err)
		}
		return err
	}
	mf := res.Materials(c, out)
	if err := mf.Save(out); err != nil {
		return err
	}
	if opts.Progress != nil {
		opts.Progress(fit.Progress{Stage: fit.StageDone, Fraction: 1})
	}
	if f.asJSON {
		return writeFitJSON(stdout, res, out)
	}
	printFitTable(stdout, res, out)
	return nil
}

// readLocks reads the locked parameters of a materials file as the fit's
// locks, at that file's values. When the capture lists its segments the
// file is validated against it (names, models, ranges); otherwise the fit
// checks the names against the mesh's segments.
func readLocks(path string, c *capture.Capture) (map[string]fit.Lock, error) {
	mf, err := materials.Load(path)
	if err != nil {
		return nil, err
	}
	if len(c.Segments) > 0 {
		if err := mf.Validate(c, nil); err != nil {
			return nil, err
		}
	}
	locks := map[string]fit.Lock{}
	for i, ms := range mf.Segments {
		if len(ms.Locked) == 0 {
			continue
		}
		p, err := ms.Params()
		if err != nil {
			return nil, fmt.Errorf("%s: segments[%d]: %w", path, i, err)
		}
		locks[ms.Name] = fit.Lock{Names: append([]string(nil), ms.Locked...), Values: p}
	}
	return locks, nil
}

func describeProgress(p fit.Progress, elapsed time.Duration) string {
	t := elapsed.Round(100 * time.Millisecond)
	switch p.Stage {
	case fit.StageObservations:
		return fmt.Sprintf("photos %d/%d  %v", p.Photo, p.Photos, t)
	case fit.StageFit:
		return fmt.Sprintf("segment %d/%d %-12s pass %3d  loss %.4g  %v", p.Segment+1, p.Segments, p.SegmentName, p.Pass, p.Loss, t)
	}
	return fmt.Sprintf("%s  %v", p.Stage, t)
}

// fitPM formats value ± sigma.
func fitPM(v, s float64) string {
	if math.IsInf(s, 0) || math.IsNaN(s) {
		return fmt.Sprintf("%.3f ± ?", v)
	}
	return fmt.Sprintf("%.3f±%.3f", v, s)
}

func printFitTable(w io.Writer, res *fit.Result, out string) {
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "segment\tmodel\tdiffuse (r g b)\tspecular F0 (r g b)\troughness\tobs\tnear-spec\trms rel.\tpasses")
	for _, s := range res.Segments {
		if !s.Fitted {
			fmt.Fprintf(tw, "%s\t%s\tnot fitted\t\t\t%d\t%d\t\t\n", s.Name, s.Kind, s.Observations, s.NearSpecular)
			continue
		}
		diffuse := "-"
		if s.Kind != brdf.Metal {
			diffuse = fmt.Sprintf("%s %s %s", fitPM(s.Params.Diffuse[0], s.Sigma.Diffuse[0]), fitPM(s.Params.Diffuse[1], s.Sigma.Diffuse[1]), fitPM(s.Params.Diffuse[2], s.Sigma.Diffuse[2]))
		}
		spec := fitPM(s.Params.Specular[0], s.Sigma.Specular[0])
		if s.Kind != brdf.Dielectric {
			spec = fmt.Sprintf("%s %s %s", spec, fitPM(s.Params.Specular[1], s.Sigma.Specular[1]), fitPM(s.Params.Specular[2], s.Sigma.Specular[2]))
		}
		near := fmt.Sprint(s.NearSpecular)
		if s.NearSpecularCensored > 0 {
			near = fmt.Sprintf("%d (%d clipped)", s.NearSpecular, s.NearSpecularCensored)
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\t%d\t%s\t%.1f%%\t%d\n", s.Name, s.Kind, diffuse, spec,
			fitPM(s.Params.Roughness, s.Sigma.Roughness), s.Observations, near, 100*s.RMSLog, s.Passes)
	}
	tw.Flush()
	for _, s := range res.Segments {
		if len(s.Locked) > 0 {
			fmt.Fprintf(w, "held: %s: %s at the -locks file's values (± 0: not estimated)\n", s.Name, strings.Join(s.Locked, ", "))
		}
	}
	for _, s := range res.Segments {
		for _, m := range s.Warnings {
			fmt.Fprintf(w, "warning: %s: %s\n", s.Name, m)
		}
	}
	for _, m := range res.Warnings {
		fmt.Fprintf(w, "warning: %s\n", m)
	}
	var rej []string
	for k, v := range res.Rejections.Map() {
		rej = append(rej, fmt.Sprintf("%s %d", k, v))
	}
	sort.Strings(rej)
	fmt.Fprintf(w, "photos used %d; rejected pixels: %s\n", len(res.PhotosUsed), strings.Join(rej, ", "))
	if res.Clipped > 0 {
		var per []string
		for _, s := range res.Segments {
			if s.Censored > 0 {
				per = append(per, fmt.Sprintf("%s %d", s.Name, s.Censored))
			}
		}
		fmt.Fprintf(w, "saturated pixels kept as lower bounds (censored): %d, of which observations drawn: %s\n", res.Clipped, strings.Join(per, ", "))
	}
	if res.Scale.Solved {
		fmt.Fprintf(w, "radiometric scale %.5g ± %.2g (%s)\n", res.Scale.Value, res.Scale.Sigma, strings.Join(res.Scale.Targets, ", "))
	}
	fmt.Fprintf(w, "optimizer %s, %d passes, %.1f s (%.1f s reading photos); wrote %s\n", res.Optimizer, res.Passes, res.Seconds, res.ObservationSeconds, out)
}

// fitJSON is the -json output: the materials file's content plus the
// per-photo residuals.
type fitJSON struct {
	Materials  string           `json:"materials"`
	Optimizer  string           `json:"optimizer"`
	Passes     int              `json:"passes"`
	Seconds    float64          `json:"seconds"`
	Scale      float64          `json:"radiometric_scale"`
	ScaleFound bool             `json:"radiometric_scale_solved"`
	Rejections map[string]int   `json:"rejections"`
	Clipped    int              `json:"clipped_kept,omitempty"`
	Segments   []fitSegmentJSON `json:"segments"`
	Photos     []fitPhotoJSON   `json:"photos"`
	Warnings   []string         `json:"warnings,omitempty"`
}

type fitSegmentJSON struct {
	Name         string     `json:"name"`
	Model        string     `json:"model"`
	Fitted       bool       `json:"fitted"`
	Diffuse      [3]float64 `json:"diffuse"`
	Specular     [3]float64 `json:"specular"`
	Roughness    float64    `json:"roughness"`
	Sigma        *sigmaJSON `json:"sigma,omitempty"`
	Observations int        `json:"observations"`
	NearSpecular int        `json:"near_specular"`
	Censored     int        `json:"censored,omitempty"`
	NearSpecCens int        `json:"near_specular_censored,omitempty"`
	RMSE         float64    `json:"rmse"`
	RMSLog       float64    `json:"rms_log"`
	Passes       int        `json:"passes"`
	Stop         string     `json:"stop,omitempty"`
	Locked       []string   `json:"locked,omitempty"`
	Warnings     []string   `json:"warnings,omitempty"`
}

type sigmaJSON struct {
	Diffuse   [3]float64 `json:"diffuse"`
	Specular  [3]float64 `json:"specular"`
	Roughness float64    `json:"roughness"`
}

type fitPhotoJSON struct {
	File         string  `json:"file"`
	Observations int     `json:"observations"`
	Ratio        float64 `json:"ratio"`
	RMSLog       float64 `json:"rms_log"`
	Outlier      bool    `json:"outlier,omitempty"`
}

func writeFitJSON(w io.Writer, res *fit.Result, out string) error {
	j := fitJSON{Materials: out, Optimizer: string(res.Optimizer), Passes: res.Passes, Seconds: res.Seconds,
		Scale: res.Scale.Value, ScaleFound: res.Scale.Solved, Rejections: res.Rejections.Map(), Clipped: res.Clipped, Warnings: res.Warnings}
	for _, s := range res.Segments {
		sj := fitSegmentJSON{Name: s.Name, Model: s.Kind.String(), Fitted: s.Fitted, Diffuse: s.Params.Diffuse,
			Specular: s.Params.Specular, Roughness: s.Params.Roughness, Observations: s.Observations,
			NearSpecular: s.NearSpecular, Censored: s.Censored, NearSpecCens: s.NearSpecularCensored, RMSE: s.RMSE, RMSLog: s.RMSLog, Passes: s.Passes, Stop: s.Stop, Locked: s.Locked, Warnings: s.Warnings}
		sg := sigmaJSON{Diffuse: s.Sigma.Diffuse, Specular: s.Sigma.Specular, Roughness: s.Sigma.Roughness}
		if s.Fitted && fitFinite(sg.Diffuse[:]) && fitFinite(sg.Specular[:]) && fitFinite([]float64{sg.Roughness}) {
			sj.Sigma = &sg
		}
		j.Segments = append(j.Segments, sj)
	}
	for _, p := range res.Photos {
		j.Photos = append(j.Photos, fitPhotoJSON{File: p.File, Observations: p.Observations, Ratio: p.Ratio, RMSLog: p.RMSLog, Outlier: p.Outlier})
	}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(j)
}

func fitFinite(v []float64) bool {
	for _, x := range v {
		if math.IsInf(x, 0) || math.IsNaN(x) {
			return false
		}
	}
	return true
}
