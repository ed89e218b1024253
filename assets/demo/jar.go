package demo

import (
	"math"

	"patina/render"
)

// The jar in the dome: Patina's own demonstration object. All sizes in
// metres; the capture's up axis is +Z and the card's top face is z = 0.
const (
	JarHeight   = 0.14   // rim height above the card
	jarWall     = 0.004  // wall thickness at the rim
	footHeight  = 0.008  // the unglazed foot ring
	bandLow     = 0.098  // gilt band at the shoulder, lower edge
	bandHigh    = 0.108  // upper edge
	reliefLow   = 0.035  // relief band on the body
	reliefHigh  = 0.075  //
	reliefDepth = 0.0012 // radial amplitude of the relief
	reliefLobes = 12     // lobes around the body
	cardHalf    = 0.15   // the grey card is 0.30 m square
	cardThick   = 0.004  //
	bandRaise   = 0.0006 // the gilding stands slightly proud of the glaze
	innerFloorZ = 0.012  // the jar's inside floor
	baseLift    = 0.0002 // the base clears the card by 0.2 mm so their faces never coincide
)

// Segment labels of the demo mesh (PLY face property "segment").
const (
	LabelGlaze = 0
	LabelGilt  = 1
	LabelFoot  = 2
	LabelCard  = 3
)

// SegmentNames are the capture's names for the labels above, in label order.
var SegmentNames = []string{"glaze", "gilding", "foot", "grey card"}

// outerRadius is the jar's outer profile r(z) before relief: a rounded belly
// narrowing to a neck and flaring at the rim (a sum of smooth bumps chosen by
// eye for a stoneware storage jar).
func outerRadius(z float64) float64 {
	t := z / JarHeight
	belly := 0.052 * math.Exp(-math.Pow((t-0.45)/0.42, 2))
	neck := 0.034 - 0.006*math.Exp(-math.Pow((t-0.86)/0.07, 2))
	rim := 0.004 * math.Exp(-math.Pow((t-1.0)/0.04, 2))
	// A smooth maximum of belly and neck keeps the profile free of kinks.
	r := 0.5*(belly+neck) + 0.5*math.Sqrt((belly-neck)*(belly-neck)+1e-6) + rim
	// The foot: a slightly narrower ring at the base.
	if z < footHeight {
		r -= 0.003 * (1 - z/footHeight)
	}
	return r
}

// profilePoint is one point of the swept profile: radius, height, label, and
// whether angular relief applies.
type profilePoint struct {
	r, z  float64
	label int32
}

// profile returns the closed profile curve from the centre of the outer base,
// up the outside, over the rim, down the inside to the centre of the inner
// floor. n controls the sampling density along the outside wall.
func profile(n int) []profilePoint {
	var pts []profilePoint
	// Outer base, from the axis outward (the base sits on the card, z = 0).
	rb := outerRadius(0)
	nb := max(4, n/12)
	for i := 0; i < nb; i++ {
		pts = append(pts, profilePoint{r: rb * float64(i) / float64(nb), z: 0, label: LabelFoot})
	}
	// Outside wall, bottom to rim.
	for i := 0; i <= n; i++ {
		z := JarHeight * float64(i) / float64(n)
		lab := int32(LabelGlaze)
		switch {
		case z < footHeight:
			lab = LabelFoot
		case z >= bandLow && z <= bandHigh:
			lab = LabelGilt
		}
		pts = append(pts, profilePoint{r: outerRadius(z), z: z, label: lab})
	}
	// Rim: a small rounded lip across the wall thickness.
	rt := outerRadius(JarHeight)
	for i := 1; i <= 4; i++ {
		a := math.Pi * float64(i) / 5
		pts = append(pts, profilePoint{
			r:     rt - jarWall/2 + jarWall/2*math.Cos(a),
			z:     JarHeight + jarWall/2*math.Sin(a),
			label: LabelGlaze,
		})
	}
	// Inside wall, rim down to the inner floor, offset by the wall thickness.
	ni := max(8, n/3)
	for i := 0; i <= ni; i++ {
		z := JarHeight - (JarHeight-innerFloorZ)*float64(i)/float64(ni)
		pts = append(pts, profilePoint{r: outerRadius(z) - jarWall, z: z, label: LabelGlaze})
	}
	// Inner floor, outward to the axis.
	rf := outerRadius(innerFloorZ) - jarWall
	for i := 1; i <= nb; i++ {
		pts = append(pts, profilePoint{r: rf * (1 - float64(i)/float64(nb)), z: innerFloorZ, label: LabelGlaze})
	}
	return pts
}

// displace applies the relief and the raised gilt band at angle phi.
func displace(p profilePoint, phi float64, outside bool) float64 {
	r := p.r
	if !outside {
		return r
	}
	if p.z > reliefLow && p.z < reliefHigh {
		// A lobed relief whose lobes twist with height, so the body is not a
		// surface of revolution there.
		s := (p.z - reliefLow) / (reliefHigh - reliefLow)
		envelope := math.Pow(math.Sin(math.Pi*s), 2)
		r += reliefDepth * envelope * math.Cos(reliefLobes*phi+3*s)
	}
	if p.label == LabelGilt {
		r += bandRaise
	}
	return r
}

// JarMesh builds the demo mesh: the jar swept around +Z with angular
// resolution around and profile resolution along, standing on the grey card.
// around = 448, along = 150 gives about 200,000 triangles.
func JarMesh(around, along int) *render.Mesh {
	prof := profile(along)
	m := &render.Mesh{}
	// Which profile points are on the outside (relief applies): the outer
	// base and outer wall, i.e. up to the rim.
	nOutside := 0
	for i, p := range prof {
		if i > 0 && p.z >= JarHeight && nOutside == 0 {
			nOutside = i
		}
	}
	// Vertices: the first and last profile points lie on the axis and are
	// shared by the whole ring.
	ring := make([][]uint32, len(prof))
	for i, p := range prof {
		onAxis := p.r == 0
		if onAxis {
			ring[i] = []uint32{uint32(m.NumVertices())}
			m.Positions = append(m.Positions, 0, 0, float32(p.z+baseLift))
			continue
		}
		ring[i] = make([]uint32, around)
		for j := 0; j < around; j++ {
			phi := 2 * math.Pi * float64(j) / float64(around)
			r := displace(p, phi, i <= nOutside)
			ring[i][j] = uint32(m.NumVertices())
			m.Positions = append(m.Positions, float32(r*math.Cos(phi)), float32(r*math.Sin(phi)), float32(p.z+baseLift))
		}
	}
	// Faces between consecutive profile rings; the profile runs outward on
	// the base and upward on the outside while phi turns counter-clockwise
	// about +Z, so (i, j), (i+1, j+1), (i+1, j) winds counter-clockwise seen
	// from outside the solid (checked by the signed-volume test).
	tri := func(a, b, c uint32, lab int32) {
		m.Indices = append(m.Indices, a, b, c)
		m.Segments = append(m.Segments, lab)
	}
	for i := 0; i+1 < len(prof); i++ {
		lab := prof[i+1].label
		if prof[i].label == LabelFoot || prof[i+1].label == LabelFoot {
			lab = LabelFoot
		}
		if prof[i].label == LabelGilt && prof[i+1].label == LabelGilt {
			lab = LabelGilt
		} else if prof[i+1].label == LabelGilt {
			lab = LabelGlaze
		}
		a, b := ring[i], ring[i+1]
		for j := 0; j < around; j++ {
			j1 := (j + 1) % around
			switch {
			case len(a) == 1:
				tri(a[0], b[j1], b[j], lab)
			case len(b) == 1:
				tri(a[j], a[j1], b[0], lab)
			default:
				tri(a[j], b[j1], b[j], lab)
				tri(a[j], a[j1], b[j1], lab)
			}
		}
	}
	addCard(m)
	m.SegmentLabels = make([]render.SegmentLabel, len(SegmentNames))
	for i := range m.SegmentLabels {
		m.SegmentLabels[i] = render.SegmentLabel{Label: i}
	}
	return m
}

// addCard adds the grey card: a thin box whose top face is z = 0, with its
// own vertices per face so that its edges stay sharp. The top face is split
// into a grid so that its triangles stay small next to the jar.
func addCard(m *render.Mesh) {
	h, t := cardHalf, cardThick
	quad := func(p [4][3]float64) {
		base := uint32(m.NumVertices())
		for _, v := range p {
			m.Positions = append(m.Positions, float32(v[0]), float32(v[1]), float32(v[2]))
		}
		m.Indices = append(m.Indices, base, base+1, base+2, base, base+2, base+3)
		m.Segments = append(m.Segments, LabelCard, LabelCard)
	}
	const g = 8
	for i := 0; i < g; i++ {
		for j := 0; j < g; j++ {
			x0, x1 := -h+2*h*float64(i)/g, -h+2*h*float64(i+1)/g
			y0, y1 := -h+2*h*float64(j)/g, -h+2*h*float64(j+1)/g
			quad([4][3]float64{{x0, y0, 0}, {x1, y0, 0}, {x1, y1, 0}, {x0, y1, 0}})
		}
	}
	quad([4][3]float64{{-h, -h, -t}, {-h, h, -t}, {h, h, -t}, {h, -h, -t}}) // bottom
	quad([4][3]float64{{-h, -h, -t}, {h, -h, -t}, {h, -h, 0}, {-h, -h, 0}}) // -y side
	quad([4][3]float64{{h, -h, -t}, {h, h, -t}, {h, h, 0}, {h, -h, 0}})     // +x side
	quad([4][3]float64{{h, h, -t}, {-h, h, -t}, {-h, h, 0}, {h, h, 0}})     // +y side
	quad([4][3]float64{{-h, h, -t}, {-h, -h, -t}, {-h, -h, 0}, {-h, h, 0}}) // -x side
}
