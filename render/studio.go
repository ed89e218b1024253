package render

import (
	"fmt"
	"math"

	"patina/brdf"
)

// SoftBox is a flat rectangular emitter of uniform radiance facing the
// origin of a studio environment: its centre lies at Distance along the
// direction (AzimuthDeg, ElevationDeg) of the Environment mapping (azimuth
// from the map's A axis towards B, elevation above the horizon), its width
// runs horizontally and its height in the vertical plane through the centre.
type SoftBox struct {
	AzimuthDeg, ElevationDeg float64
	Distance                 float64  // m from the origin to the centre
	Width, Height            float64  // m
	Radiance                 brdf.RGB // W/(m^2 sr) per channel
}

// StudioBoxes are the soft boxes of the built-in studio: a large key light
// front left and high, a weaker fill on the other side and a narrow strip
// behind and above for rims. Radiances are chosen so that a white card
// facing the key renders about 1 at exposure 0.
var StudioBoxes = []SoftBox{
	{AzimuthDeg: 35, ElevationDeg: 35, Distance: 2, Width: 1.2, Height: 0.9, Radiance: brdf.RGB{12, 11.6, 11}},
	{AzimuthDeg: -60, ElevationDeg: 15, Distance: 2, Width: 1.0, Height: 1.4, Radiance: brdf.RGB{3, 3, 3.1}},
	{AzimuthDeg: 180, ElevationDeg: 55, Distance: 2, Width: 0.4, Height: 1.4, Radiance: brdf.RGB{8, 8, 8}},
}

// Studio radiance of the surroundings: a dim grey floor (lower hemisphere)
// and a darker backdrop (upper hemisphere, outside the boxes).
var (
	StudioFloor    = brdf.RGB{0.05, 0.05, 0.05}
	StudioBackdrop = brdf.RGB{0.01, 0.01, 0.01}
)

// Studio is the built-in studio environment: StudioBoxes over StudioFloor
// and StudioBackdrop. Width 0 means 1024; Height 0 means Width/2.
type Studio struct {
	Width, Height int
	Boxes         []SoftBox // nil means StudioBoxes
}

// Map generates the studio map: width, height and linear RGB radiance, row
// 0 at the zenith. Each texel holds the mean radiance over its area (4 x 4
// subsamples), so box edges are antialiased.
func (s Studio) Map() (w, h int, pix []float32, err error) {
	w, h = s.Width, s.Height
	if w == 0 {
		w = 1024
	}
	if h == 0 {
		h = w / 2
	}
	if w < 8 || h < 4 || w > MaxEnvironmentSide || h > MaxEnvironmentSide || w*h > MaxEnvironmentTexels {
		return 0, 0, nil, fmt.Errorf("render: studio map %dx%d: expected sides 8..%d (height >= 4)", w, h, MaxEnvironmentSide)
	}
	boxes := s.Boxes
	if boxes == nil {
		boxes = StudioBoxes
	}
	type rect struct {
		c, n, e1, e2 Vec3
		hw, hh       float64
		L            brdf.RGB
	}
	rs := make([]rect, len(boxes))
	for i, b := range boxes {
		if !(b.Distance > 0 && b.Width > 0 && b.Height > 0) || b.ElevationDeg >= 90 || b.ElevationDeg <= -90 {
			return 0, 0, nil, fmt.Errorf("render: soft box %d: expected positive distance and size and an elevation strictly between -90 and 90 degrees", i)
		}
		az, el := b.AzimuthDeg*math.Pi/180, b.ElevationDeg*math.Pi/180
		dir := Vec3{math.Cos(el) * math.Cos(az), math.Cos(el) * math.Sin(az), math.Sin(el)}
		e1 := Vec3{-math.Sin(az), math.Cos(az), 0}
		rs[i] = rect{c: dir.Mul(b.Distance), n: dir.Neg(), e1: e1, e2: dir.Cross(e1).Neg(), hw: b.Width / 2, hh: b.Height / 2, L: b.Radiance}
	}
	const n = 4
	pix = make([]float32, 3*w*h)
	for j := 0; j < h; j++ {
		for i := 0; i < w; i++ {
			var sum brdf.RGB
			for a := 0; a < n; a++ {
				theta := math.Pi * (float64(j) + (float64(a)+0.5)/n) / float64(h)
				st, ct := math.Sin(theta), math.Cos(theta)
				for b := 0; b < n; b++ {
					phi := 2 * math.Pi * (float64(i) + (float64(b)+0.5)/n) / float64(w)
					d := Vec3{st * math.Cos(phi), st * math.Sin(phi), ct}
					L := StudioBackdrop
					if ct < 0 {
						L = StudioFloor
					}
					best := math.Inf(1)
					for _, r := range rs {
						dn := d.Dot(r.n)
						if dn >= 0 {
							continue
						}
						t := r.c.Dot(r.n) / dn
						if t <= 0 || t >= best {
							continue
						}
						q := d.Mul(t).Sub(r.c)
						if math.Abs(q.Dot(r.e1)) <= r.hw && math.Abs(q.Dot(r.e2)) <= r.hh {
							best, L = t, r.L
						}
					}
					for c := 0; c < 3; c++ {
						sum[c] += L[c]
					}
				}
			}
			k := 3 * (j*w + i)
			for c := 0; c < 3; c++ {
				pix[k+c] = float32(sum[c] / (n * n))
			}
		}
	}
	return w, h, pix, nil
}
