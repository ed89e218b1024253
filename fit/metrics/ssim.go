package metrics

import (
	"math"
	"sync"
)

// SSIM constants of Wang, Bovik, Sheikh and Simoncelli (2004): an 11-tap
// Gaussian window with sigma 1.5 (scikit-image reaches the same 11 taps with
// truncate = 3.5), K1 = 0.01, K2 = 0.03, on values with dynamic range 1.
const (
	ssimRadius = 5
	ssimSigma  = 1.5
	ssimK1     = 0.01
	ssimK2     = 0.03
	ssimC1     = (ssimK1 * 1) * (ssimK1 * 1)
	ssimC2     = (ssimK2 * 1) * (ssimK2 * 1)
)

// ssimWindow is the 1-D Gaussian, normalised to sum 1 the way
// scipy.ndimage's gaussian_filter normalises its kernel.
var ssimWindow = func() (g [2*ssimRadius + 1]float64) {
	sum := 0.0
	for i := range g {
		x := float64(i - ssimRadius)
		g[i] = math.Exp(-0.5 * x * x / (ssimSigma * ssimSigma))
		sum += g[i]
	}
	for i := range g {
		g[i] /= sum
	}
	return
}()

// The six weighted sums of the masked SSIM statistics: weight, x, y, x^2,
// y^2, xy, each times the validity mask.
const ssimSums = 6

// ssimBandRows is the height of the bands of the SSIM pass. Each band
// filters its own 2 * ssimRadius halo rows again, so bands are taller than
// those of the per-pixel pass; still fixed, for determinism.
const ssimBandRows = 96

// ssimBuffers are one worker's scratch space: a ring of the 11 most recent
// horizontally filtered rows per sum (small enough to stay in cache), one
// row of products, and one vertically filtered output row.
type ssimBuffers struct {
	ring [ssimSums][]float64 // row r of the image lives at slot r % 11
	row  [ssimSums][]float64
	out  [ssimSums][]float64
}

var ssimPool sync.Pool

func getSSIMBuffers(w int) *ssimBuffers {
	if b, ok := ssimPool.Get().(*ssimBuffers); ok && len(b.row[0]) == w {
		return b
	}
	b := &ssimBuffers{}
	for k := 0; k < ssimSums; k++ {
		b.ring[k] = make([]float64, (2*ssimRadius+1)*w)
		b.row[k] = make([]float64, w)
		b.out[k] = make([]float64, w)
	}
	return b
}

// ssimBands is the number of bands of the SSIM pass.
func (c *comparison) ssimBands() int { return (c.h + ssimBandRows - 1) / ssimBandRows }

// ssimBand evaluates the masked SSIM map over one band of rows and adds it
// to the band's sums in c.ssimAcc. See the package documentation for the
// masking rule.
func (c *comparison) ssimBand(band int) {
	w, h := c.w, c.h
	const win = 2*ssimRadius + 1
	y0, y1 := band*ssimBandRows, min((band+1)*ssimBandRows, h)
	buf := getSSIMBuffers(w)
	defer ssimPool.Put(buf)
	g := &ssimWindow

	// horizontal filters image row y into its ring slot.
	horizontal := func(y int) {
		base := y * w
		m, mx, my, mxx, myy, mxy := buf.row[0][:w], buf.row[1][:w], buf.row[2][:w], buf.row[3][:w], buf.row[4][:w], buf.row[5][:w]
		lr, lp := c.lumR[base:base+w], c.lumP[base:base+w]
		for x := 0; x < w; x++ {
			if c.valid != nil && !c.valid[base+x] {
				m[x], mx[x], my[x], mxx[x], myy[x], mxy[x] = 0, 0, 0, 0, 0, 0
				continue
			}
			a, b := lr[x], lp[x]
			m[x], mx[x], my[x], mxx[x], myy[x], mxy[x] = 1, a, b, a*a, b*b, a*b
		}
		off := (y % win) * w
		for k := 0; k < ssimSums; k++ {
			filterRow(buf.ring[k][off:off+w], buf.row[k], g)
		}
	}
	next := max(0, y0-ssimRadius) // next image row to filter horizontally

	accs := c.ssimAcc[band*(c.nseg+1) : (band+1)*(c.nseg+1)]
	all := &accs[c.nseg]
	for y := y0; y < y1; y++ {
		for ; next <= min(h-1, y+ssimRadius); next++ {
			horizontal(next)
		}
		if c.excludeBorder && (y < ssimRadius || y >= h-ssimRadius) {
			continue
		}
		xs, xe := 0, w
		if c.excludeBorder {
			xs, xe = ssimRadius, w-ssimRadius
		}
		// Only the span of the row's valid pixels needs the vertical
		// filter: the map is evaluated at valid pixels only.
		if c.valid != nil {
			row := c.valid[y*w : y*w+w]
			for xs < xe && !row[xs] {
				xs++
			}
			for xe > xs && !row[xe-1] {
				xe--
			}
		}
		if xs >= xe {
			continue
		}
		ylo, yhi := max(0, y-ssimRadius), min(h-1, y+ssimRadius)
		for k := 0; k < ssimSums; k++ {
			o := buf.out[k][xs:xe]
			if yhi-ylo == 2*ssimRadius {
				// The whole window is inside the image: one pass with
				// the symmetric taps paired.
				var r [win][]float64
				for t := range r {
					yy := ylo + t
					r[t] = buf.ring[k][(yy%win)*w+xs : (yy%win)*w+xe][:len(o)]
				}
				verticalSymmetric(o, &r, g)
				continue
			}
			first := true
			for yy := ylo; yy <= yhi; yy++ {
				src := buf.ring[k][(yy%win)*w+xs : (yy%win)*w+xe]
				src = src[:len(o)]
				gt := g[yy-y+ssimRadius]
				if first {
					for x := range o {
						o[x] = gt * src[x]
					}
					first = false
					continue
				}
				for x := range o {
					o[x] += gt * src[x]
				}
			}
		}
		s0, s1, s2, s11, s22, s12 := buf.out[0][:w], buf.out[1][:w], buf.out[2][:w], buf.out[3][:w], buf.out[4][:w], buf.out[5][:w]
		for x := xs; x < xe; x++ {
			i := y*w + x
			if c.valid != nil && !c.valid[i] {
				continue
			}
			// Weighted statistics over the valid pixels of the window,
			// with population covariances (Wang et al. 2004, eq. 14-16).
			inv := 1 / s0[x]
			ux, uy := s1[x]*inv, s2[x]*inv
			vx := s11[x]*inv - ux*ux
			vy := s22[x]*inv - uy*uy
			vxy := s12[x]*inv - ux*uy
			ssim := (2*ux*uy + ssimC1) * (2*vxy + ssimC2) / ((ux*ux + uy*uy + ssimC1) * (vx + vy + ssimC2))
			all.ssim += ssim
			all.ssimN++
			if c.segment != nil {
				if s := c.segment[i]; s >= 0 {
					accs[s].ssim += ssim
					accs[s].ssimN++
				}
			}
		}
	}
}

// verticalSymmetric sets o to the window-weighted sum of the 11 rows r,
// pairing the rows at equal distance from the centre (the window is
// symmetric) to halve the multiplications.
func verticalSymmetric(o []float64, r *[2*ssimRadius + 1][]float64, g *[2*ssimRadius + 1]float64) {
	r0, r1, r2, r3, r4, r5 := r[0][:len(o)], r[1][:len(o)], r[2][:len(o)], r[3][:len(o)], r[4][:len(o)], r[5][:len(o)]
	r6, r7, r8, r9, r10 := r[6][:len(o)], r[7][:len(o)], r[8][:len(o)], r[9][:len(o)], r[10][:len(o)]
	g0, g1, g2, g3, g4, g5 := g[0], g[1], g[2], g[3], g[4], g[5]
	for x := range o {
		o[x] = g0*(r0[x]+r10[x]) + g1*(r1[x]+r9[x]) + g2*(r2[x]+r8[x]) + g3*(r3[x]+r7[x]) + g4*(r4[x]+r6[x]) + g5*r5[x]
	}
}

// filterRow convolves src with the window g into dst; taps outside the row
// contribute nothing (they count as invalid pixels).
func filterRow(dst, src []float64, g *[2*ssimRadius + 1]float64) {
	w := len(src)
	dst = dst[:w]
	edge := func(x int) {
		sum := 0.0
		for t := -ssimRadius; t <= ssimRadius; t++ {
			if xx := x + t; xx >= 0 && xx < w {
				sum += g[t+ssimRadius] * src[xx]
			}
		}
		dst[x] = sum
	}
	lo, hi := min(ssimRadius, w), max(min(ssimRadius, w), w-ssimRadius)
	for x := 0; x < lo; x++ {
		edge(x)
	}
	g0, g1, g2, g3, g4, g5 := g[0], g[1], g[2], g[3], g[4], g[5]
	for x := lo; x < hi; x++ {
		s := src[x-ssimRadius : x+ssimRadius+1 : x+ssimRadius+1]
		dst[x] = g0*(s[0]+s[10]) + g1*(s[1]+s[9]) + g2*(s[2]+s[8]) + g3*(s[3]+s[7]) + g4*(s[4]+s[6]) + g5*s[5]
	}
	for x := hi; x < w; x++ {
		edge(x)
	}
}
