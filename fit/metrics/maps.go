package metrics

import (
	"fmt"
	"image"
	"image/color"
	"image/draw"
	"math"
	"sync"

	"golang.org/x/image/font"
	"golang.org/x/image/font/gofont/goregular"
	"golang.org/x/image/font/opentype"
	"golang.org/x/image/math/fixed"

	"patina/render/colour"
)

// Maps holds the per-pixel results of Compare and, unless Options.NoImages,
// their pictures.
type Maps struct {
	Width, Height int
	// DeltaE is the CIEDE2000 difference per pixel, row-major; NaN where
	// the pixel was not compared.
	DeltaE []float32
	// DeltaL is the signed CIELAB lightness difference L*(render) -
	// L*(photo) per pixel (the luminance difference in perceptual units);
	// NaN where not compared.
	DeltaL []float32

	// DeltaEImage is the Delta E 2000 map in a perceptually uniform
	// sequential colour scale, with its legend below.
	DeltaEImage *image.RGBA
	// DeltaLImage is the lightness difference in a diverging scale (blue:
	// the simulation is darker than the photo; orange: lighter), with its
	// legend.
	DeltaLImage *image.RGBA
	// Strip shows photo | simulation | Delta E 2000 map side by side,
	// labelled, with the map's legend below.
	Strip *image.RGBA
	// DeltaEScale and LightnessScale are the ends of the two colour scales.
	DeltaEScale, LightnessScale float64
}

// The colour scales are Patina's own: smooth paths through CIELAB (a
// Catmull-Rom spline, so that the path has no corners) through a few anchor
// colours chosen with monotonic lightness, re-sampled so that consecutive
// entries are equally far apart in Delta E 2000. Equal steps of the data
// then look like equal steps of colour, and the lightness ramp alone still
// orders the values for readers with a colour-vision deficiency and on
// grey-scale prints.
var (
	// sequentialAnchors run from a dark blue-violet (no error) through
	// magenta and orange to a pale yellow (large error).
	sequentialAnchors = []colour.Lab{
		{L: 14, A: 22, B: -38},
		{L: 34, A: 52, B: -42},
		{L: 55, A: 62, B: 18},
		{L: 76, A: 22, B: 68},
		{L: 95, A: -6, B: 42},
	}
	// divergingAnchors run from a dark blue (simulation darker) through a
	// neutral near-white (no difference) to a dark orange-brown
	// (simulation lighter). The two arms have the same lightness and
	// chroma at each anchor, so that equal |dL*| look equally strong.
	divergingAnchors = []colour.Lab{
		lch(30, 40, 285),
		lch(63, 34, 265),
		{L: 96, A: 0, B: 0},
		lch(63, 34, 62),
		lch(30, 40, 55),
	}
)

// lch builds a CIELAB colour from lightness, chroma and hue in degrees.
func lch(l, c, hDeg float64) colour.Lab {
	s, co := math.Sincos(hDeg * math.Pi / 180)
	return colour.Lab{L: l, A: c * co, B: c * s}
}

// A colourScale maps t in [0, 1] to one of its entries.
type colourScale struct {
	lab  []colour.Lab
	rgba []color.RGBA
}

func (s *colourScale) at(t float64) color.RGBA {
	if !(t > 0) {
		t = 0
	}
	if t > 1 {
		t = 1
	}
	return s.rgba[int(math.Round(t*float64(len(s.rgba)-1)))]
}

var (
	sequentialScale = sync.OnceValue(func() *colourScale { return uniformScale(sequentialAnchors, 256) })
	// The diverging scale has an odd number of entries, so that zero has
	// an entry of its own (the centre anchor); each arm is uniform in Delta
	// E 2000 on its own.
	divergingScale = sync.OnceValue(func() *colourScale {
		neg := uniformScale(divergingAnchors[:3], 128)
		pos := uniformScale(divergingAnchors[2:], 128)
		return &colourScale{lab: append(neg.lab, pos.lab[1:]...), rgba: append(neg.rgba, pos.rgba[1:]...)}
	})
)

// uniformScale samples the Catmull-Rom spline through anchors at n points
// equally spaced in Delta E 2000 arc length.
func uniformScale(anchors []colour.Lab, n int) *colourScale {
	const dense = 1024 // sub-steps per anchor interval for the arc length
	k := len(anchors)
	at := func(i int) colour.Lab { // the end tangents mirror the neighbours
		switch {
		case i < 0:
			return colour.Lab{L: 2*anchors[0].L - anchors[1].L, A: 2*anchors[0].A - anchors[1].A, B: 2*anchors[0].B - anchors[1].B}
		case i >= k:
			return colour.Lab{L: 2*anchors[k-1].L - anchors[k-2].L, A: 2*anchors[k-1].A - anchors[k-2].A, B: 2*anchors[k-1].B - anchors[k-2].B}
		}
		return anchors[i]
	}
	cr := func(p0, p1, p2, p3, t float64) float64 {
		return 0.5 * (2*p1 + (p2-p0)*t + (2*p0-5*p1+4*p2-p3)*t*t + (3*p1-p0-3*p2+p3)*t*t*t)
	}
	var pts []colour.Lab
	for i := 0; i+1 < k; i++ {
		p0, p1, p2, p3 := at(i-1), at(i), at(i+1), at(i+2)
		for j := 0; j < dense; j++ {
			t := float64(j) / dense
			pts = append(pts, colour.Lab{L: cr(p0.L, p1.L, p2.L, p3.L, t), A: cr(p0.A, p1.A, p2.A, p3.A, t), B: cr(p0.B, p1.B, p2.B, p3.B, t)})
		}
	}
	pts = append(pts, anchors[k-1])
	arc := make([]float64, len(pts))
	for i := 1; i < len(pts); i++ {
		arc[i] = arc[i-1] + colour.DeltaE2000(pts[i-1], pts[i])
	}
	s := &colourScale{lab: make([]colour.Lab, n), rgba: make([]color.RGBA, n)}
	j := 0
	for i := 0; i < n; i++ {
		target := arc[len(arc)-1] * float64(i) / float64(n-1)
		for j+2 < len(arc) && arc[j+1] < target {
			j++
		}
		t := 0.0
		if d := arc[j+1] - arc[j]; d > 0 {
			t = math.Min(1, math.Max(0, (target-arc[j])/d))
		}
		a, b := pts[j], pts[j+1]
		c := colour.Lab{L: a.L + t*(b.L-a.L), A: a.A + t*(b.A-a.A), B: a.B + t*(b.B-a.B)}
		s.lab[i] = c
		s.rgba[i] = labToRGBA(c)
	}
	return s
}

// labToRGBA encodes a CIELAB colour as 8-bit sRGB, clipping out-of-gamut
// components (the anchors are chosen so that clipping stays small; a test
// bounds it).
func labToRGBA(c colour.Lab) color.RGBA {
	r, g, b := colour.LabToLinearRGB(c)
	return color.RGBA{to8(r), to8(g), to8(b), 255}
}

// to8 is the 8-bit sRGB code of a linear value clipped to [0, 1], through a
// table over the linear value quantised to 1/65535 (pictures need millions of
// them; the quantisation moves a code by at most one, near black, and tests
// bound it).
func to8(linear float64) uint8 {
	if !(linear > 0) {
		return 0
	}
	if linear >= 1 {
		return 255
	}
	return to8Table[int(linear*65535+0.5)]
}

var to8Table = func() (t [65536]uint8) {
	for i := range t {
		t[i] = uint8(math.Round(255 * colour.LinearToSRGB(float64(i)/65535)))
	}
	return
}()

// Hatching marks the pixels that were not compared; it cannot be mistaken
// for a value of either scale (both are coloured, the hatch is neutral).
var (
	hatchA = color.RGBA{0x9a, 0x9a, 0x9a, 255}
	hatchB = color.RGBA{0xc4, 0xc4, 0xc4, 255}
)

func hatch(x, y, period int) color.RGBA {
	if ((x+y)/period)%2 == 0 {
		return hatchA
	}
	return hatchB
}

// draw renders the three pictures.
func (m *Maps) draw(render, photo []float32, peak float64, r *Result, opt Options) {
	m.DeltaEScale = opt.DeltaEScale
	if m.DeltaEScale == 0 {
		m.DeltaEScale = 10
	}
	m.LightnessScale = opt.LightnessScale
	if m.LightnessScale == 0 {
		m.LightnessScale = 10
	}
	blk := max(1, opt.ImageBlock)
	// w, h are the pictures' size from here on.
	w, h := (m.Width+blk-1)/blk, (m.Height+blk-1)/blk
	de, dl := m.DeltaE, m.DeltaL
	if blk > 1 {
		de, dl = blockMeans(m.DeltaE, m.DeltaL, m.Width, m.Height, blk)
	}
	fs := fontSize(h)
	period := max(3, fs/3)

	seq, div := sequentialScale(), divergingScale()
	deMap := image.NewRGBA(image.Rect(0, 0, w, h))
	dlMap := image.NewRGBA(image.Rect(0, 0, w, h))
	put := func(pix []uint8, i int, c color.RGBA) {
		p := pix[4*i : 4*i+4 : 4*i+4]
		p[0], p[1], p[2], p[3] = c.R, c.G, c.B, c.A
	}
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			d := de[i]
			if d != d {
				c := hatch(x, y, period)
				put(deMap.Pix, i, c)
				put(dlMap.Pix, i, c)
				continue
			}
			put(deMap.Pix, i, seq.at(float64(d)/m.DeltaEScale))
			put(dlMap.Pix, i, div.at((float64(dl[i])/m.LightnessScale+1)/2))
		}
	}

	note := "about 1 \u0394E00 is just noticeable; hatched: not compared (background, saturated or masked)"
	if blk > 1 {
		note = fmt.Sprintf("each picture pixel: the mean of %dx%d image pixels; about 1 \u0394E00 is just noticeable; hatched: not compared", blk, blk)
	}
	deLegend := legend{
		title: "CIEDE2000 colour difference \u0394E00 between photo and simulation",
		scale: seq, lo: 0, hi: m.DeltaEScale,
		lines: []string{
			fmt.Sprintf("mean %.2f   median %.2f   95th percentile %.2f   maximum %.2f   over %d pixels",
				r.DE2000Mean, r.DE2000Median, r.DE2000P95, r.DE2000Max, r.Pixels),
			note,
		},
	}
	dlNote := "hatched: not compared (background, saturated or masked)"
	if blk > 1 {
		dlNote = fmt.Sprintf("each picture pixel: the mean of %dx%d image pixels; hatched: not compared", blk, blk)
	}
	dlLegend := legend{
		title: "Lightness difference \u0394L* (CIELAB), simulation minus photo",
		scale: div, lo: -m.LightnessScale, hi: m.LightnessScale, signed: true,
		ends:  [2]string{"simulation darker", "simulation lighter"},
		lines: []string{dlNote},
	}
	m.DeltaEImage = withLegend(deMap, deLegend, fs)
	m.DeltaLImage = withLegend(dlMap, dlLegend, fs)

	// The strip: photo | simulation | map, on the same exposure as the
	// metrics (Peak as white).
	gap := max(2, fs/4)
	panels := []*image.RGBA{displayImage(photo, m.Width, m.Height, blk, peak), displayImage(render, m.Width, m.Height, blk, peak), deMap}
	labels := []string{"photo", "simulation", "\u0394E00 map"}
	sw := 3*w + 2*gap
	top := image.NewRGBA(image.Rect(0, 0, sw, h))
	draw.Draw(top, top.Bounds(), image.NewUniform(color.White), image.Point{}, draw.Src)
	for k, p := range panels {
		x0 := k * (w + gap)
		draw.Draw(top, image.Rect(x0, 0, x0+w, h), p, image.Point{}, draw.Src)
		drawTag(top, x0+gap, gap, labels[k], fs)
	}
	m.Strip = withLegend(top, deLegend, fs)
}

// blockMeans returns the means of the compared (not NaN) values of de and
// dl over blocks of blk x blk pixels (the last row and column of blocks
// may be smaller); NaN for a block with none.
func blockMeans(de, dl []float32, w, h, blk int) (bde, bdl []float32) {
	bw, bh := (w+blk-1)/blk, (h+blk-1)/blk
	bde, bdl = make([]float32, bw*bh), make([]float32, bw*bh)
	for by := 0; by < bh; by++ {
		for bx := 0; bx < bw; bx++ {
			var se, sl float64
			n := 0
			for y := by * blk; y < min((by+1)*blk, h); y++ {
				for x := bx * blk; x < min((bx+1)*blk, w); x++ {
					if d := de[y*w+x]; d == d {
						se += float64(d)
						sl += float64(dl[y*w+x])
						n++
					}
				}
			}
			j := by*bw + bx
			if n == 0 {
				bde[j], bdl[j] = float32(math.NaN()), float32(math.NaN())
				continue
			}
			bde[j], bdl[j] = float32(se/float64(n)), float32(sl/float64(n))
		}
	}
	return bde, bdl
}

// displayImage encodes linear RGB (w x h) for display with peak as white,
// each picture pixel the mean of a block of blk x blk image pixels. NaN
// values add nothing to the sum (invalid pixels may hold anything); with
// blk 1 an infinity shows as white or black.
func displayImage(lin []float32, w, h, blk int, peak float64) *image.RGBA {
	bw, bh := (w+blk-1)/blk, (h+blk-1)/blk
	img := image.NewRGBA(image.Rect(0, 0, bw, bh))
	inv := 1 / peak
	for by := 0; by < bh; by++ {
		for bx := 0; bx < bw; bx++ {
			var sum [3]float64
			n := 0
			for y := by * blk; y < min((by+1)*blk, h); y++ {
				for x := bx * blk; x < min((bx+1)*blk, w); x++ {
					i := y*w + x
					for c := 0; c < 3; c++ {
						if v := float64(lin[3*i+c]); v == v {
							sum[c] += v
						}
					}
					n++
				}
			}
			j := by*bw + bx
			p := img.Pix[4*j : 4*j+4 : 4*j+4]
			for c := 0; c < 3; c++ {
				p[c] = to8(sum[c] / float64(n) * inv)
			}
			p[3] = 255
		}
	}
	return img
}

// fontSize scales the text with the picture, within readable bounds.
func fontSize(h int) int { return min(28, max(12, h/34)) }

var (
	fontOnce sync.Once
	fontData *opentype.Font
	faces    sync.Map // size -> font.Face
)

// face returns the Go Regular face (golang.org/x/image/font/gofont, BSD
// licence) at size pixels.
func face(size int) font.Face {
	fontOnce.Do(func() {
		f, err := opentype.Parse(goregular.TTF)
		if err != nil {
			panic("metrics: embedded Go Regular font: " + err.Error()) // a build defect, not input
		}
		fontData = f
	})
	if f, ok := faces.Load(size); ok {
		return f.(font.Face)
	}
	f, err := opentype.NewFace(fontData, &opentype.FaceOptions{Size: float64(size), DPI: 72, Hinting: font.HintingFull})
	if err != nil {
		panic("metrics: font face: " + err.Error())
	}
	faces.Store(size, f)
	return f
}

func drawText(dst draw.Image, x, baseline int, s string, size int, c color.Color) int {
	d := font.Drawer{Dst: dst, Src: image.NewUniform(c), Face: face(size), Dot: fixed.P(x, baseline)}
	d.DrawString(s)
	return d.Dot.X.Round()
}

func textWidth(s string, size int) int {
	return font.MeasureString(face(size), s).Ceil()
}

// drawTag writes a label in white on a dark box at (x, y), the top left.
func drawTag(dst *image.RGBA, x, y int, s string, size int) {
	pad := max(2, size/4)
	box := image.Rect(x, y, x+textWidth(s, size)+2*pad, y+size+2*pad)
	draw.Draw(dst, box, image.NewUniform(color.RGBA{0, 0, 0, 170}), image.Point{}, draw.Over)
	drawText(dst, x+pad, y+pad+size*4/5, s, size, color.White)
}

// legend describes the legend under a map.
type legend struct {
	title  string
	scale  *colourScale
	lo, hi float64
	signed bool      // ticks carry a sign
	ends   [2]string // words under the two ends of the bar
	lines  []string  // notes under the bar
}

// withLegend returns img with the legend drawn below it on white.
func withLegend(img *image.RGBA, lg legend, fs int) *image.RGBA {
	pad := fs / 2
	small := max(11, fs*4/5)
	lineH := fs * 3 / 2
	minW := max(textWidth(lg.title, fs), textWidth(longest(lg.lines), small)) + 2*pad
	w := max(img.Bounds().Dx(), minW)
	barH := fs
	tickH := fs/3 + small + small/2 // tick marks and their numbers
	rowH := small * 8 / 5           // one line of the smaller text
	rows := len(lg.lines)
	if lg.ends[0] != "" {
		rows++
	}
	legendH := pad + lineH + barH + tickH + rows*rowH + pad
	out := image.NewRGBA(image.Rect(0, 0, w, img.Bounds().Dy()+legendH))
	draw.Draw(out, out.Bounds(), image.NewUniform(color.White), image.Point{}, draw.Src)
	draw.Draw(out, img.Bounds(), img, image.Point{}, draw.Src)

	ink := color.RGBA{20, 20, 20, 255}
	y := img.Bounds().Dy() + pad
	drawText(out, pad, y+fs, lg.title, fs, ink)
	y += lineH
	// The bar spans the width less room for the end labels.
	bx0, bx1 := pad+fs, w-pad-fs*2
	for x := bx0; x < bx1; x++ {
		c := lg.scale.at(float64(x-bx0) / float64(bx1-bx0-1))
		for yy := y; yy < y+barH; yy++ {
			out.SetRGBA(x, yy, c)
		}
	}
	y += barH
	// Ticks and their numbers.
	step := niceStep(lg.hi-lg.lo, min(10, max(3, (bx1-bx0)/(fs*4))))
	for v := math.Ceil(lg.lo/step-1e-9) * step; v <= lg.hi+1e-9*step; v += step {
		x := bx0 + int(math.Round((v-lg.lo)/(lg.hi-lg.lo)*float64(bx1-bx0-1)))
		for yy := y; yy < y+fs/3; yy++ {
			out.SetRGBA(x, yy, ink)
		}
		s := formatTick(v, lg.signed)
		switch {
		case math.Abs(v-lg.hi) < 1e-9*step:
			s = "\u2265" + s // larger values show in the end colour
		case lg.signed && math.Abs(v-lg.lo) < 1e-9*step:
			s = "\u2264" + s
		}
		tw := textWidth(s, small)
		drawText(out, x-tw/2, y+fs/3+small, s, small, ink)
	}
	y += tickH
	if lg.ends[0] != "" {
		base := y + small
		drawText(out, bx0, base, lg.ends[0], small, ink)
		drawText(out, bx1-textWidth(lg.ends[1], small), base, lg.ends[1], small, ink)
		mid := "no difference"
		drawText(out, (bx0+bx1-textWidth(mid, small))/2, base, mid, small, ink)
		y += rowH
	}
	for _, l := range lg.lines {
		drawText(out, pad, y+small, l, small, ink)
		y += rowH
	}
	return out
}

func longest(ss []string) string {
	l := ""
	for _, s := range ss {
		if len(s) > len(l) {
			l = s
		}
	}
	return l
}

// niceStep is a tick spacing of 1, 2 or 5 times a power of ten giving at
// most maxTicks intervals over span.
func niceStep(span float64, maxTicks int) float64 {
	raw := span / float64(maxTicks)
	p := math.Pow(10, math.Floor(math.Log10(raw)))
	for _, m := range []float64{1, 2, 5, 10} {
		if m*p >= raw {
			return m * p
		}
	}
	return 10 * p
}

func formatTick(v float64, signed bool) string {
	if math.Abs(v) < 1e-12 {
		v = 0
	}
	s := fmt.Sprintf("%g", v)
	if signed && v > 0 {
		s = "+" + s
	}
	if v < 0 {
		s = "\u2212" + s[1:] // a true minus sign
	}
	return s
}
