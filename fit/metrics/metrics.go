package metrics

import (
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"runtime"
	"sync"
	"sync/atomic"

	"patina/render/colour"
)

// Limits checked before anything is allocated.
const (
	// MaxPixels is the largest image (width * height) Compare accepts,
	// 8192 x 8192; Compare needs about 40 bytes per pixel of working memory.
	MaxPixels = 8192 * 8192
	// MaxSegments is the largest number of segments Compare accepts.
	MaxSegments = 1024
	// MinPeak and MaxPeak bound Options.Peak, so that 1 / peak and the
	// values divided by it are normal float64 numbers.
	MinPeak = 1e-30
	MaxPeak = 1e30
	// MaxRelative bounds |value| / peak over the valid pixels of both
	// images, whatever the peak (Options.Peak or the default): CIEDE2000
	// raises chroma to the 7th power, and a value about 1e40 times the
	// peak (a float32 near its largest, over a peak of 1e-9) overflows it
	// to NaN. No image of a scene lit within its exposure comes near this
	// bound; a value beyond it is an error that names the pixel.
	MaxRelative = 1e12
)

// DefaultPeakPercentile is the percentile of the photo's valid max(R, G, B)
// values used as the linear peak when Options.Peak is zero.
const DefaultPeakPercentile = 99.9

// Options configures Compare. The zero value is the documented default.
type Options struct {
	// Peak is the linear value taken as white: the peak of the linear
	// PSNR, the value encoded to sRGB 1.0, and the CIELAB reference white.
	// 0 means the 99.9th percentile of max(R, G, B) over the photo's valid
	// pixels (DefaultPeakPercentile).
	Peak float64
	// Threads is the number of goroutines; 0 means runtime.GOMAXPROCS(0).
	// Results do not depend on it.
	Threads int
	// SSIMExcludeBorder leaves the pixels within 5 of the image edge out of
	// the SSIM means, as scikit-image's structural_similarity does.
	SSIMExcludeBorder bool
	// NoImages skips drawing the map images; Maps still carries the
	// per-pixel Delta E 2000 and lightness-difference values.
	NoImages bool
	// DeltaEScale is the Delta E 2000 at the top of the map's colour scale;
	// larger values show in the top colour. 0 means 10.
	DeltaEScale float64
	// LightnessScale is the |dL*| at the ends of the lightness-difference
	// map's diverging scale. 0 means 10.
	LightnessScale float64
	// ImageBlock, above 1, draws the pictures at 1/ImageBlock of the
	// image's width and height (rounded up): each picture pixel shows a
	// block of ImageBlock x ImageBlock image pixels, the photo and the
	// simulation as the mean of their linear values, the maps as the mean
	// Delta E 2000 and dL* of the block's compared pixels (hatched where
	// it has none). The statistics and Maps.DeltaE and Maps.DeltaL always
	// use every pixel. 0 or 1 means full size; at most MaxImageBlock.
	ImageBlock int
}

// MaxImageBlock bounds Options.ImageBlock.
const MaxImageBlock = 64

// Stats holds the metrics of a set of pixels.
type Stats struct {
	PSNRLinear   float64 // dB, linear values / Peak, peak 1
	PSNRSRGB     float64 // dB, sRGB-encoded values, peak 1
	SSIM         float64 // mean SSIM of the sRGB-encoded luminance
	DE2000Mean   float64
	DE2000Median float64
	DE2000P95    float64
	DE2000Max    float64
	Pixels       int // valid pixels compared
}

// Result is the outcome of Compare for the whole image and per segment.
// MarshalJSON writes it with the keys of the tags below.
type Result struct {
	PSNRLinear   float64 `json:"psnr_linear"`
	PSNRSRGB     float64 `json:"psnr_srgb"`
	SSIM         float64 `json:"ssim"`
	DE2000Mean   float64 `json:"de2000_mean"`
	DE2000Median float64 `json:"de2000_median"`
	DE2000P95    float64 `json:"de2000_p95"`
	DE2000Max    float64 `json:"de2000_max"`
	Pixels       int     `json:"pixels"`
	// Peak is the linear value used as white (Options.Peak).
	Peak float64 `json:"linear_peak"`
	// Segments lists the segments that have valid pixels, by index.
	Segments []SegmentResult `json:"segments"`
}

// SegmentResult holds the metrics of one segment's valid pixels.
type SegmentResult struct {
	Index        int     `json:"index"`
	Name         string  `json:"name"`
	PSNRLinear   float64 `json:"psnr_linear"`
	PSNRSRGB     float64 `json:"psnr_srgb"`
	SSIM         float64 `json:"ssim"`
	DE2000Mean   float64 `json:"de2000_mean"`
	DE2000Median float64 `json:"de2000_median"`
	DE2000P95    float64 `json:"de2000_p95"`
	DE2000Max    float64 `json:"de2000_max"`
	Pixels       int     `json:"pixels"`
}

// InputError reports inputs that Compare cannot use: What names the input
// (and the pixel, where one is at fault) and what was expected.
type InputError struct{ What string }

func (e *InputError) Error() string { return "metrics: invalid input: " + e.What }

// ErrNoPixels is returned when no pixel is valid: there is nothing to compare.
var ErrNoPixels = errors.New("metrics: no valid pixels to compare")

func inputErrorf(format string, args ...any) error {
	return &InputError{What: fmt.Sprintf(format, args...)}
}

// bandRows is the height of the bands of rows the work is split into; fixed,
// so that the order of floating-point sums does not depend on the threads.
const bandRows = 32

// acc accumulates the sums of one segment (or of the whole image) over one band.
type acc struct {
	seLin, seSRGB, de, ssim float64
	n, ssimN                int
	max                     float32
}

func (a *acc) add(b *acc) {
	a.seLin += b.seLin
	a.seSRGB += b.seSRGB
	a.de += b.de
	a.ssim += b.ssim
	a.n += b.n
	a.ssimN += b.ssimN
	if b.max > a.max {
		a.max = b.max
	}
}

// Compare computes the metrics of render against photo over the valid
// pixels, overall and per segment, and the per-pixel maps.
//
// render and photo hold 3*w*h linear RGB values (row-major triples). valid
// has w*h entries (nil: every pixel is valid). segment has w*h entries
// (nil: no segments); a negative entry belongs to no segment. segNames names
// the segments by index (nil: the segments are numbered up to the largest
// index found, with empty names). Values of invalid pixels are ignored and
// may be anything, NaN included; a non-finite value in a valid pixel is an
// error.
func Compare(render, photo []float32, w, h int, valid []bool, segment []int32, segNames []string, opt Options) (*Result, *Maps, error) {
	if w <= 0 || h <= 0 {
		return nil, nil, inputErrorf("image size %dx%d: width and height must be positive", w, h)
	}
	if w > MaxPixels/h {
		return nil, nil, inputErrorf("image size %dx%d exceeds the limit of %d pixels", w, h, MaxPixels)
	}
	n := w * h
	if len(render) != 3*n {
		return nil, nil, inputErrorf("render has %d values, want 3*%d*%d = %d", len(render), w, h, 3*n)
	}
	if len(photo) != 3*n {
		return nil, nil, inputErrorf("photo has %d values, want 3*%d*%d = %d", len(photo), w, h, 3*n)
	}
	if valid != nil && len(valid) != n {
		return nil, nil, inputErrorf("valid mask has %d entries, want %d*%d = %d", len(valid), w, h, n)
	}
	if segment != nil && len(segment) != n {
		return nil, nil, inputErrorf("segment map has %d entries, want %d*%d = %d", len(segment), w, h, n)
	}
	if len(segNames) > MaxSegments {
		return nil, nil, inputErrorf("%d segment names exceed the limit of %d", len(segNames), MaxSegments)
	}
	if opt.Peak != 0 && !(opt.Peak >= MinPeak && opt.Peak <= MaxPeak) {
		return nil, nil, inputErrorf("Options.Peak %v: want 0 (the default) or a value in [%g, %g]", opt.Peak, MinPeak, MaxPeak)
	}
	if opt.Threads < 0 {
		return nil, nil, inputErrorf("Options.Threads %d: want >= 0", opt.Threads)
	}
	if opt.ImageBlock < 0 || opt.ImageBlock > MaxImageBlock {
		return nil, nil, inputErrorf("Options.ImageBlock %d: want 0..%d", opt.ImageBlock, MaxImageBlock)
	}
	for _, s := range []struct {
		name string
		v    float64
	}{{"DeltaEScale", opt.DeltaEScale}, {"LightnessScale", opt.LightnessScale}} {
		if !(s.v >= 0) || math.IsInf(s.v, 0) {
			return nil, nil, inputErrorf("Options.%s %v: want a finite value >= 0 (0 for the default)", s.name, s.v)
		}
	}
	nseg := len(segNames)
	if segment != nil {
		for i, s := range segment {
			if s < 0 {
				continue
			}
			if segNames != nil && int(s) >= len(segNames) {
				return nil, nil, inputErrorf("segment map pixel (%d, %d): index %d, want < %d (the number of segment names) or negative", i%w, i/w, s, len(segNames))
			}
			if int(s) >= MaxSegments {
				return nil, nil, inputErrorf("segment map pixel (%d, %d): index %d exceeds the limit of %d segments", i%w, i/w, s, MaxSegments)
			}
			if segNames == nil && int(s) >= nseg {
				nseg = int(s) + 1
			}
		}
	}
	if err := checkFinite(render, photo, w, h, valid, opt.Threads); err != nil {
		return nil, nil, err
	}
	peak := opt.Peak
	if peak == 0 {
		var err error
		if peak, err = defaultPeak(photo, valid, n); err != nil {
			return nil, nil, err
		}
	}
	if err := checkRange(render, photo, w, h, valid, peak, opt.Threads); err != nil {
		return nil, nil, err
	}
	threads := opt.Threads
	if threads == 0 {
		threads = runtime.GOMAXPROCS(0)
	}

	c := &comparison{
		render: render, photo: photo, w: w, h: h, valid: valid, segment: segment,
		nseg: nseg, inv: 1 / peak, excludeBorder: opt.SSIMExcludeBorder,
		deltaE: make([]float32, n), deltaL: make([]float32, n),
		lumR: make([]float64, n), lumP: make([]float64, n),
	}
	nbands := (h + bandRows - 1) / bandRows
	c.bandAcc = make([]acc, nbands*(nseg+1))
	c.ssimAcc = make([]acc, c.ssimBands()*(nseg+1))
	parallel(nbands, threads, c.pixelBand)
	parallel(c.ssimBands(), threads, c.ssimBand)

	// Reduce in band order: deterministic for any thread count.
	tot := make([]acc, nseg+1)
	for _, bands := range [][]acc{c.bandAcc, c.ssimAcc} {
		for b := 0; b < len(bands)/(nseg+1); b++ {
			for s := range tot {
				tot[s].add(&bands[b*(nseg+1)+s])
			}
		}
	}
	all := &tot[nseg]
	if all.n == 0 {
		return nil, nil, ErrNoPixels
	}
	groups := c.gatherDeltaE(tot)
	stats := make([]Stats, nseg+1)
	parallel(nseg+1, threads, func(s int) {
		if tot[s].n > 0 {
			stats[s] = c.stats(&tot[s], groups[s])
		}
	})
	res := &Result{Peak: peak}
	res.setStats(stats[nseg])
	for s := 0; s < nseg; s++ {
		if tot[s].n == 0 {
			continue
		}
		st := stats[s]
		name := ""
		if s < len(segNames) {
			name = segNames[s]
		}
		res.Segments = append(res.Segments, SegmentResult{
			Index: s, Name: name,
			PSNRLinear: st.PSNRLinear, PSNRSRGB: st.PSNRSRGB, SSIM: st.SSIM,
			DE2000Mean: st.DE2000Mean, DE2000Median: st.DE2000Median, DE2000P95: st.DE2000P95, DE2000Max: st.DE2000Max,
			Pixels: st.Pixels,
		})
	}

	maps := &Maps{Width: w, Height: h, DeltaE: c.deltaE, DeltaL: c.deltaL}
	if !opt.NoImages {
		maps.draw(render, photo, peak, res, opt)
	}
	return res, maps, nil
}

// comparison holds the inputs and the working buffers of one Compare.
type comparison struct {
	render, photo []float32
	w, h          int
	valid         []bool
	segment       []int32
	nseg          int
	inv           float64 // 1 / peak
	excludeBorder bool

	deltaE, deltaL []float32 // per pixel, NaN where invalid
	lumR, lumP     []float64 // sRGB-encoded luminance, 0 where invalid
	bandAcc        []acc     // per-pixel pass: [band][segment, then the whole image]
	ssimAcc        []acc     // SSIM pass, likewise
}

// pixelBand computes the per-pixel quantities of one band of rows.
func (c *comparison) pixelBand(band int) {
	nseg := c.nseg
	accs := c.bandAcc[band*(nseg+1) : (band+1)*(nseg+1)]
	all := &accs[nseg]
	y0, y1 := band*bandRows, min((band+1)*bandRows, c.h)
	inv := c.inv
	nan := float32(math.NaN())
	for i := y0 * c.w; i < y1*c.w; i++ {
		if c.valid != nil && !c.valid[i] {
			c.deltaE[i], c.deltaL[i] = nan, nan
			c.lumR[i], c.lumP[i] = 0, 0
			continue
		}
		rr := float64(c.render[3*i]) * inv
		rg := float64(c.render[3*i+1]) * inv
		rb := float64(c.render[3*i+2]) * inv
		pr := float64(c.photo[3*i]) * inv
		pg := float64(c.photo[3*i+1]) * inv
		pb := float64(c.photo[3*i+2]) * inv

		d0, d1, d2 := rr-pr, rg-pg, rb-pb
		seLin := d0*d0 + d1*d1 + d2*d2
		e0 := encode(rr) - encode(pr)
		e1 := encode(rg) - encode(pg)
		e2 := encode(rb) - encode(pb)
		seSRGB := e0*e0 + e1*e1 + e2*e2

		lr := colour.LinearRGBToLab(rr, rg, rb)
		lp := colour.LinearRGBToLab(pr, pg, pb)
		de := colour.DeltaE2000(lp, lr)
		c.deltaE[i] = float32(de)
		c.deltaL[i] = float32(lr.L - lp.L)
		c.lumR[i] = encode(colour.Luminance(rr, rg, rb))
		c.lumP[i] = encode(colour.Luminance(pr, pg, pb))

		all.seLin += seLin
		all.seSRGB += seSRGB
		all.de += de
		all.n++
		if f := float32(de); f > all.max {
			all.max = f
		}
		if c.segment != nil {
			if s := c.segment[i]; s >= 0 {
				a := &accs[s]
				a.seLin += seLin
				a.seSRGB += seSRGB
				a.de += de
				a.n++
				if f := float32(de); f > a.max {
					a.max = f
				}
			}
		}
	}
}

// stats turns the sums of a pixel set and its Delta E values (which it
// reorders) into metrics.
func (c *comparison) stats(a *acc, de []float32) Stats {
	s := Stats{Pixels: a.n}
	s.PSNRLinear = psnr(a.seLin / float64(3*a.n))
	s.PSNRSRGB = psnr(a.seSRGB / float64(3*a.n))
	if a.ssimN > 0 {
		s.SSIM = a.ssim / float64(a.ssimN)
	} else {
		s.SSIM = math.NaN() // every pixel in the excluded border
	}
	s.DE2000Mean = a.de / float64(a.n)
	s.DE2000Median, s.DE2000P95 = medianAndP95(de)
	s.DE2000Max = float64(a.max)
	return s
}

// psnr is 10 log10(1 / mse) for signals with peak 1.
func psnr(mse float64) float64 {
	if mse == 0 {
		return math.Inf(1)
	}
	return -10*math.Log10(mse) + 0 // + 0: a PSNR of 0 dB, not -0
}

// gatherDeltaE copies the valid Delta E values into one buffer grouped by
// segment and returns the group of each segment and, last, of the whole
// image (a separate copy).
func (c *comparison) gatherDeltaE(tot []acc) [][]float32 {
	nseg := c.nseg
	all := tot[nseg].n
	out := make([][]float32, nseg+1)
	if c.segment == nil {
		v := make([]float32, 0, all)
		for _, d := range c.deltaE {
			if d == d { // not NaN: valid
				v = append(v, d)
			}
		}
		out[nseg] = v
		return out
	}
	inSeg := 0
	for s := 0; s < nseg; s++ {
		inSeg += tot[s].n
	}
	buf := make([]float32, inSeg+all)
	off := make([]int, nseg)
	o := 0
	for s := 0; s < nseg; s++ {
		off[s] = o
		out[s] = buf[o : o : o+tot[s].n]
		o += tot[s].n
	}
	whole := buf[o : o : o+all]
	for i, d := range c.deltaE {
		if d != d {
			continue
		}
		whole = append(whole, d)
		if s := c.segment[i]; s >= 0 {
			out[s] = append(out[s], d)
		}
	}
	out[nseg] = whole
	return out
}

// checkFinite reports the first valid pixel (in row-major order) holding a
// NaN or an infinity, checking bands of rows in parallel.
func checkFinite(render, photo []float32, w, h int, valid []bool, threads int) error {
	if threads == 0 {
		threads = runtime.GOMAXPROCS(0)
	}
	nbands := (h + bandRows - 1) / bandRows
	bad := make([]int, nbands) // first bad pixel of each band, or -1
	parallel(nbands, threads, func(b int) {
		bad[b] = -1
		for i := b * bandRows * w; i < min((b+1)*bandRows, h)*w; i++ {
			if valid != nil && !valid[i] {
				continue
			}
			p, r := photo[3*i:3*i+3:3*i+3], render[3*i:3*i+3:3*i+3]
			// v - v is NaN exactly for NaN and the infinities.
			if s := (p[0] - p[0]) + (p[1] - p[1]) + (p[2] - p[2]) + (r[0] - r[0]) + (r[1] - r[1]) + (r[2] - r[2]); s != 0 {
				bad[b] = i
				return
			}
		}
	})
	for _, i := range bad {
		if i < 0 {
			continue
		}
		for c := 0; c < 3; c++ {
			if v := float64(photo[3*i+c]); math.IsNaN(v) || math.IsInf(v, 0) {
				return inputErrorf("photo pixel (%d, %d) channel %d is %v in a valid pixel", i%w, i/w, c, v)
			}
		}
		for c := 0; c < 3; c++ {
			if v := float64(render[3*i+c]); math.IsNaN(v) || math.IsInf(v, 0) {
				return inputErrorf("render pixel (%d, %d) channel %d is %v in a valid pixel", i%w, i/w, c, v)
			}
		}
	}
	return nil
}

// checkRange reports the first valid pixel (in row-major order) with a
// value beyond MaxRelative times the peak, checking bands of rows in
// parallel.
func checkRange(render, photo []float32, w, h int, valid []bool, peak float64, threads int) error {
	if threads == 0 {
		threads = runtime.GOMAXPROCS(0)
	}
	lim := MaxRelative * peak
	nbands := (h + bandRows - 1) / bandRows
	bad := make([]int, nbands) // first bad pixel of each band, or -1
	parallel(nbands, threads, func(b int) {
		bad[b] = -1
		for i := b * bandRows * w; i < min((b+1)*bandRows, h)*w; i++ {
			if valid != nil && !valid[i] {
				continue
			}
			for c := 3 * i; c < 3*i+3; c++ {
				if math.Abs(float64(photo[c])) > lim || math.Abs(float64(render[c])) > lim {
					bad[b] = i
					return
				}
			}
		}
	})
	for _, i := range bad {
		if i < 0 {
			continue
		}
		for _, im := range []struct {
			name string
			v    []float32
		}{{"photo", photo}, {"render", render}} {
			for c := 0; c < 3; c++ {
				if v := float64(im.v[3*i+c]); math.Abs(v) > lim {
					return inputErrorf("%s pixel (%d, %d) channel %d is %g, more than %g times the linear peak %g in magnitude (CIEDE2000 would overflow); check the radiometric scale and exposure, or set Options.Peak", im.name, i%w, i/w, c, v, MaxRelative, peak)
				}
			}
		}
	}
	return nil
}

// defaultPeak is the DefaultPeakPercentile of max(R, G, B) over the photo's
// valid pixels.
func defaultPeak(photo []float32, valid []bool, n int) (float64, error) {
	v := make([]float32, 0, n)
	for i := 0; i < n; i++ {
		if valid != nil && !valid[i] {
			continue
		}
		v = append(v, max(photo[3*i], photo[3*i+1], photo[3*i+2]))
	}
	if len(v) == 0 {
		return 0, ErrNoPixels
	}
	p := percentile(v, DefaultPeakPercentile)
	if !(p > 0) {
		return 0, inputErrorf("photo: the %g-th percentile of max(R, G, B) over the valid pixels is %g; set Options.Peak to a positive value", DefaultPeakPercentile, p)
	}
	return p, nil
}

// parallel runs f(0..n-1) on up to threads goroutines.
func parallel(n, threads int, f func(int)) {
	if threads > n {
		threads = n
	}
	if threads <= 1 {
		for i := 0; i < n; i++ {
			f(i)
		}
		return
	}
	var next atomic.Int64
	var wg sync.WaitGroup
	for t := 0; t < threads; t++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				i := int(next.Add(1)) - 1
				if i >= n {
					return
				}
				f(i)
			}
		}()
	}
	wg.Wait()
}

// jsonFloat writes a non-finite value as null (JSON has no infinities: the
// PSNR of identical images is +Inf) and reads null back as +Inf.
type jsonFloat float64

func (f jsonFloat) MarshalJSON() ([]byte, error) {
	v := float64(f)
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return []byte("null"), nil
	}
	return json.Marshal(v)
}

func (f *jsonFloat) UnmarshalJSON(b []byte) error {
	if string(b) == "null" {
		*f = jsonFloat(math.Inf(1))
		return nil
	}
	var v float64
	if err := json.Unmarshal(b, &v); err != nil {
		return err
	}
	*f = jsonFloat(v)
	return nil
}

// jsonMean writes NaN (a mean over no pixels: an SSIM whose pixels all lie
// in the excluded border) as null and reads null back as NaN.
type jsonMean float64

func (f jsonMean) MarshalJSON() ([]byte, error) { return jsonFloat(f).MarshalJSON() }

func (f *jsonMean) UnmarshalJSON(b []byte) error {
	if string(b) == "null" {
		*f = jsonMean(math.NaN())
		return nil
	}
	return (*jsonFloat)(f).UnmarshalJSON(b)
}

// statsJSON is the JSON form shared by Result and SegmentResult.
type statsJSON struct {
	PSNRLinear   jsonFloat `json:"psnr_linear"`
	PSNRSRGB     jsonFloat `json:"psnr_srgb"`
	SSIM         jsonMean  `json:"ssim"`
	DE2000Mean   float64   `json:"de2000_mean"`
	DE2000Median float64   `json:"de2000_median"`
	DE2000P95    float64   `json:"de2000_p95"`
	DE2000Max    float64   `json:"de2000_max"`
	Pixels       int       `json:"pixels"`
}

type segmentJSON struct {
	Index int    `json:"index"`
	Name  string `json:"name"`
	statsJSON
}

type resultJSON struct {
	statsJSON
	Peak     float64       `json:"linear_peak"`
	Segments []segmentJSON `json:"segments"`
}

func toStatsJSON(s Stats) statsJSON {
	return statsJSON{jsonFloat(s.PSNRLinear), jsonFloat(s.PSNRSRGB), jsonMean(s.SSIM),
		s.DE2000Mean, s.DE2000Median, s.DE2000P95, s.DE2000Max, s.Pixels}
}

func (j statsJSON) stats() Stats {
	return Stats{float64(j.PSNRLinear), float64(j.PSNRSRGB), float64(j.SSIM),
		j.DE2000Mean, j.DE2000Median, j.DE2000P95, j.DE2000Max, j.Pixels}
}

// Stats returns the whole-image metrics.
func (r *Result) Stats() Stats {
	return Stats{r.PSNRLinear, r.PSNRSRGB, r.SSIM, r.DE2000Mean, r.DE2000Median, r.DE2000P95, r.DE2000Max, r.Pixels}
}

// Stats returns the segment's metrics.
func (s *SegmentResult) Stats() Stats {
	return Stats{s.PSNRLinear, s.PSNRSRGB, s.SSIM, s.DE2000Mean, s.DE2000Median, s.DE2000P95, s.DE2000Max, s.Pixels}
}

// MarshalJSON writes the keys psnr_linear, psnr_srgb, ssim, de2000_mean,
// de2000_median, de2000_p95, de2000_max, pixels, linear_peak and segments
// (each with index, name and the same metric keys). An infinite PSNR
// (identical images) and an SSIM over no pixels (NaN) are written as null.
func (r Result) MarshalJSON() ([]byte, error) {
	j := resultJSON{statsJSON: toStatsJSON(r.Stats()), Peak: r.Peak, Segments: []segmentJSON{}}
	for _, s := range r.Segments {
		j.Segments = append(j.Segments, segmentJSON{s.Index, s.Name, toStatsJSON(s.Stats())})
	}
	return json.Marshal(j)
}

// UnmarshalJSON reads what MarshalJSON writes; a null PSNR reads as +Inf,
// a null SSIM as NaN.
func (r *Result) UnmarshalJSON(b []byte) error {
	var j resultJSON
	if err := json.Unmarshal(b, &j); err != nil {
		return err
	}
	*r = Result{Peak: j.Peak}
	r.setStats(j.stats())
	for _, s := range j.Segments {
		st := s.stats()
		r.Segments = append(r.Segments, SegmentResult{Index: s.Index, Name: s.Name,
			PSNRLinear: st.PSNRLinear, PSNRSRGB: st.PSNRSRGB, SSIM: st.SSIM,
			DE2000Mean: st.DE2000Mean, DE2000Median: st.DE2000Median, DE2000P95: st.DE2000P95, DE2000Max: st.DE2000Max,
			Pixels: st.Pixels})
	}
	return nil
}

func (r *Result) setStats(s Stats) {
	r.PSNRLinear, r.PSNRSRGB, r.SSIM = s.PSNRLinear, s.PSNRSRGB, s.SSIM
	r.DE2000Mean, r.DE2000Median, r.DE2000P95, r.DE2000Max = s.DE2000Mean, s.DE2000Median, s.DE2000P95, s.DE2000Max
	r.Pixels = s.Pixels
}
