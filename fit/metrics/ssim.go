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

// ssimBuffers are one worker's scratch space for a band.
type ssimBuffers struct {
	hor [ssimSums][]float64 // horizontally filtered rows of the band and its halo
	row [ssimSums][]float64 // products of one input row
	out [ssimSums][]float64 // vertically filtered output row
}

var ssimPool sync.Pool

func getSSIMBuffers(w int) *ssimBuffers {
	rows := bandRows + 2*ssimRadius
	if b, ok := ssimPool.Get().(*ssimBuffers); ok && len(b.row[0]) == w {
		return b
	}
	b := &ssimBuffers{}
	for k := 0; k < ssimSums; k++ {
		b.hor[k] = make([]float64, rows*w)
		b.row[k] = make([]float64, w)
		b.out[k] = make([]float64, w)
	}
	return b
}

// ssimBand evaluates the masked SSIM map over one band of rows and adds it
// to the band's sums. See the package documentation for the masking rule.
func (c *comparison) ssimBand(band int) {
	w, h := c.w, c.h
	y0, y1 := band*bandRows, min((band+1)*bandRows, h)
	ys, ye := max(0, y0-ssimRadius), min(h, y1+ssimRadius)
	buf := getSSIMBuffers(w)
	defer ssimPool.Put(buf)
	g := &ssimWindow

	// Horizontal pass over the band and its halo rows.
	for y := ys; y < ye; y++ {
		base := y * w
		m, mx, my, mxx, myy, mxy := buf.row[0], buf.row[1], buf.row[2], buf.row[3], buf.row[4], buf.row[5]
		for x := 0; x < w; x++ {
			i := base + x
			if c.valid != nil && !c.valid[i] {
				m[x], mx[x], my[x], mxx[x], myy[x], mxy[x] = 0, 0, 0, 0, 0, 0
				continue
			}
			a, b := c.lumR[i], c.lumP[i]
			m[x], mx[x], my[x], mxx[x], myy[x], mxy[x] = 1, a, b, a*a, b*b, a*b
		}
		off := (y - ys) * w
		for k := 0; k < ssimSums; k++ {
			filterRow(buf.hor[k][off:off+w], buf.row[k], g)
		}
	}

	// Vertical pass and the SSIM map.
	accs := c.bandAcc[band*(c.nseg+1) : (band+1)*(c.nseg+1)]
	all := &accs[c.nseg]
	for y := y0; y < y1; y++ {
		for k := 0; k < ssimSums; k++ {
			o := buf.out[k]
			clear(o)
			for t := -ssimRadius; t <= ssimRadius; t++ {
				yy := y + t
				if yy < 0 || yy >= h {
					continue
				}
				src := buf.hor[k][(yy-ys)*w : (yy-ys+1)*w]
				gt := g[t+ssimRadius]
				for x := range o {
					o[x] += gt * src[x]
				}
			}
		}
		if c.excludeBorder && (y < ssimRadius || y >= h-ssimRadius) {
			continue
		}
		xs, xe := 0, w
		if c.excludeBorder {
			xs, xe = ssimRadius, w-ssimRadius
		}
		s0, s1, s2, s11, s22, s12 := buf.out[0], buf.out[1], buf.out[2], buf.out[3], buf.out[4], buf.out[5]
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

// filterRow convolves src with the window g into dst; taps outside the row
// contribute nothing (they count as invalid pixels).
func filterRow(dst, src []float64, g *[2*ssimRadius + 1]float64) {
	w := len(src)
	for x := 0; x < w; x++ {
		if x >= ssimRadius && x+ssimRadius < w {
			s := src[x-ssimRadius : x+ssimRadius+1 : x+ssimRadius+1]
			dst[x] = g[0]*s[0] + g[1]*s[1] + g[2]*s[2] + g[3]*s[3] + g[4]*s[4] +
				g[5]*s[5] + g[6]*s[6] + g[7]*s[7] + g[8]*s[8] + g[9]*s[9] + g[10]*s[10]
			continue
		}
		sum := 0.0
		for t := -ssimRadius; t <= ssimRadius; t++ {
			if xx := x + t; xx >= 0 && xx < w {
				sum += g[t+ssimRadius] * src[xx]
			}
		}
		dst[x] = sum
	}
}
