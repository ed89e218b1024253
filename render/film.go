package render

import (
	"fmt"
	"math"

	"patina/brdf"
)

// MaxFilmPixels is the largest image Render accepts (width*height); the
// film keeps seven float64 sums per pixel, about 1.8 GiB at this size.
const MaxFilmPixels = 32 << 20

// Film accumulates the samples of a render. The pixel filter is a box one
// pixel wide: each sample lands at a uniformly distributed position inside
// its own pixel and counts with weight 1 for that pixel only, so a pixel's
// value is the plain mean of its samples and the variance estimate below is
// exact for it.
//
// Pixel (x, y) has its centre at camera pixel coordinates (x, y) (pixel
// (0,0) is the centre of the top-left pixel); its samples cover
// [x-0.5, x+0.5) x [y-0.5, y+0.5).
type Film struct {
	Width, Height int
	// SPP is the number of samples every pixel has received so far; with
	// adaptive sampling (Settings.Adaptive), the most any pixel has, and
	// Samples gives each pixel's own count.
	SPP int
	// Rays counts the rays traced so far (closest-hit and shadow queries),
	// for throughput figures.
	Rays  int64
	sum   []float64 // 3 per pixel: sum of radiance
	sumSq []float64 // 3 per pixel: sum of squared radiance
	alpha []float64 // 1 per pixel: sum of coverage
	// count is the number of samples of each pixel with adaptive
	// sampling; nil when every pixel has SPP.
	count []int32
}

// NewFilm allocates an empty film of w x h pixels.
func NewFilm(w, h int) (*Film, error) {
	if w <= 0 || h <= 0 || w > 1<<16 || h > 1<<16 || w*h > MaxFilmPixels {
		return nil, fmt.Errorf("render: image size %dx%d: expected sides 1..65536 and at most %d pixels", w, h, MaxFilmPixels)
	}
	n := w * h
	return &Film{Width: w, Height: h, sum: make([]float64, 3*n), sumSq: make([]float64, 3*n), alpha: make([]float64, n)}, nil
}

// add records one sample of pixel index i.
func (f *Film) add(i int, L brdf.RGB, a float64) {
	s := f.sum[3*i : 3*i+3 : 3*i+3]
	q := f.sumSq[3*i : 3*i+3 : 3*i+3]
	for c := 0; c < 3; c++ {
		s[c] += L[c]
		q[c] += L[c] * L[c]
	}
	f.alpha[i] += a
	if f.count != nil {
		f.count[i]++
	}
}

// samples is the number of samples pixel index i has received.
func (f *Film) samples(i int) int {
	if f.count != nil {
		return int(f.count[i])
	}
	return f.SPP
}

// Samples returns the number of samples pixel (x, y) has received: SPP,
// or with adaptive sampling its own count.
func (f *Film) Samples(x, y int) int { return f.samples(y*f.Width + x) }

// Adaptive reports whether the film's pixels may have different sample
// counts (Settings.Adaptive).
func (f *Film) Adaptive() bool { return f.count != nil }

// Pixel returns the mean radiance of pixel (x, y) (premultiplied by its
// coverage) and its coverage alpha in [0,1] (the fraction of samples that
// hit the object; 1 everywhere unless the background is transparent).
func (f *Film) Pixel(x, y int) (L brdf.RGB, alpha float64) {
	i := y*f.Width + x
	n := f.samples(i)
	if n == 0 {
		return L, 0
	}
	inv := 1 / float64(n)
	return brdf.RGB{f.sum[3*i] * inv, f.sum[3*i+1] * inv, f.sum[3*i+2] * inv}, f.alpha[i] * inv
}

// Variance returns the estimated variance of pixel (x, y)'s mean per
// channel: the sample variance of its samples divided by their number (the
// square of the standard error). It is +Inf with fewer than two samples.
func (f *Film) Variance(x, y int) brdf.RGB { return f.variance(y*f.Width + x) }

func (f *Film) variance(i int) brdf.RGB {
	k := f.samples(i)
	n := float64(k)
	if k < 2 {
		return brdf.RGB{math.Inf(1), math.Inf(1), math.Inf(1)}
	}
	var v brdf.RGB
	for c := 0; c < 3; c++ {
		m := f.sum[3*i+c] / n
		s2 := (f.sumSq[3*i+c] - n*m*m) / (n - 1)
		v[c] = math.Max(0, s2) / n
	}
	return v
}

// RGB returns the image as linear RGB float32 values, row by row from the
// top (3 per pixel; premultiplied by coverage), the layout of the HDR
// writers.
func (f *Film) RGB() []float32 {
	out := make([]float32, 3*f.Width*f.Height)
	if f.count != nil {
		for i, n := range f.count {
			if n > 0 {
				inv := 1 / float64(n)
				for c := 3 * i; c < 3*i+3; c++ {
					out[c] = float32(f.sum[c] * inv)
				}
			}
		}
		return out
	}
	if f.SPP == 0 {
		return out
	}
	inv := 1 / float64(f.SPP)
	for i, v := range f.sum {
		out[i] = float32(v * inv)
	}
	return out
}

// Alpha returns the coverage of every pixel, row by row from the top.
func (f *Film) Alpha() []float32 {
	out := make([]float32, f.Width*f.Height)
	for i, v := range f.alpha {
		if n := f.samples(i); n > 0 {
			out[i] = float32(v * (1 / float64(n)))
		}
	}
	return out
}

// MeanVariance returns the mean of the pixel means and the variance of
// that mean over the rectangle [x0, x1) x [y0, y1), per channel, treating
// pixels as independent (they are: each pixel has its own scrambling
// seeds). Tests use it to bound errors by confidence intervals.
func (f *Film) MeanVariance(x0, y0, x1, y1 int) (mean, variance brdf.RGB) {
	n := 0.0
	for y := y0; y < y1; y++ {
		for x := x0; x < x1; x++ {
			L, _ := f.Pixel(x, y)
			v := f.Variance(x, y)
			for c := 0; c < 3; c++ {
				mean[c] += L[c]
				variance[c] += v[c]
			}
			n++
		}
	}
	if n == 0 {
		return
	}
	for c := 0; c < 3; c++ {
		mean[c] /= n
		variance[c] /= n * n
	}
	return
}
