package demo

import (
	"fmt"
	"math"
)

// Size selects how large a demo capture to make.
type Size int

const (
	// Small is for tests and CI: 320x240 photos, a few lights.
	Small Size = iota
	// Full is the real demo: 1280x960 photos under the whole dome.
	Full
)

// ParseSize reads "small" or "full".
func ParseSize(s string) (Size, error) {
	switch s {
	case "small":
		return Small, nil
	case "full":
		return Full, nil
	}
	return 0, fmt.Errorf("unknown demo size %q (want small or full)", s)
}

func (s Size) String() string {
	if s == Full {
		return "full"
	}
	return "small"
}

// station is one camera position of the rig.
type station struct {
	id                 string
	azimuth, elevation float64 // degrees; azimuth from +X towards +Y
	distance           float64 // metres from the target
	dist               [5]float64
	linear16           bool    // writes 16-bit linear PNG instead of 8-bit sRGB
	shutter, fNumber   float64 // base shutter time (s) at ISO 100
}

// domeLight is one lamp of the dome.
type domeLight struct {
	id                 string
	azimuth, elevation float64 // degrees
	radius             float64 // metres; 0 for a point light
	intensity          [3]float64
}

const (
	domeRadius = 0.6
	targetZ    = 0.062 // the stations aim at the jar's belly
)

// stations of the rig: four stations at two heights, each with its own
// slightly different lens (distortion as a calibration would report it).
var stations = []station{
	{id: "east-low", azimuth: 20, elevation: 14, distance: 0.52, dist: [5]float64{-0.071, 0.042, 0.0004, -0.0003, 0}, shutter: 1.0 / 60, fNumber: 8},
	{id: "north-high", azimuth: 110, elevation: 38, distance: 0.50, dist: [5]float64{-0.064, 0.035, -0.0002, 0.0005, 0}, linear16: true, shutter: 1.0 / 60, fNumber: 8},
	{id: "west-low", azimuth: 200, elevation: 16, distance: 0.53, dist: [5]float64{-0.075, 0.051, 0.0003, 0.0002, -0.01}, shutter: 1.0 / 50, fNumber: 8},
	{id: "south-high", azimuth: 290, elevation: 40, distance: 0.49, dist: [5]float64{-0.068, 0.039, -0.0004, -0.0001, 0}, linear16: true, shutter: 1.0 / 60, fNumber: 8},
}

// domeLights: twelve lamps on a hemisphere of 0.6 m radius in three rings,
// staggered in azimuth; three are small spheres, as real lamps are.
var domeLights = func() []domeLight {
	var ls []domeLight
	rings := []struct {
		n         int
		elevation float64
		offset    float64
	}{{5, 22, 0}, {4, 47, 45}, {3, 72, 20}}
	k := 0
	for _, r := range rings {
		for i := 0; i < r.n; i++ {
			k++
			az := r.offset + 360*float64(i)/float64(r.n)
			// Lamps differ a little in output and colour, as real ones do.
			w := 1 + 0.06*math.Sin(float64(k)*1.7)
			warm := 0.04 * math.Cos(float64(k)*2.3)
			l := domeLight{
				id:        fmt.Sprintf("dome-%02d", k),
				azimuth:   az,
				elevation: r.elevation,
				intensity: [3]float64{2.1 * w * (1 + warm), 2.0 * w, 1.9 * w * (1 - warm)},
			}
			if k == 3 || k == 7 || k == 11 {
				l.radius = 0.004
			}
			ls = append(ls, l)
		}
	}
	return ls
}()

// layout is the rig chosen for a size.
type layout struct {
	width, height int
	focal         float64 // pixels
	stations      []station
	lights        []domeLight
	around, along int // mesh resolution
	spp           int // path tracer samples per pixel for the photos
}

func layoutFor(s Size) layout {
	if s == Full {
		return layout{width: 1280, height: 960, focal: 2050, stations: stations, lights: domeLights,
			around: 448, along: 150, spp: 8}
	}
	// Small: every station, five lights spread over the rings.
	var ls []domeLight
	for _, i := range []int{0, 2, 5, 7, 10} {
		ls = append(ls, domeLights[i])
	}
	return layout{width: 320, height: 240, focal: 512, stations: stations, lights: ls,
		around: 160, along: 64, spp: 8}
}

// pose returns the camera centre and the camera-to-world rotation (columns
// are the camera's x right, y down and z forward axes) of a station aimed at
// the jar, with +Z up.
func (st station) pose() (pos [3]float64, rot [3][3]float64) {
	az, el := st.azimuth*math.Pi/180, st.elevation*math.Pi/180
	pos = [3]float64{
		st.distance * math.Cos(el) * math.Cos(az),
		st.distance * math.Cos(el) * math.Sin(az),
		targetZ + st.distance*math.Sin(el),
	}
	fwd := norm3([3]float64{-pos[0], -pos[1], targetZ - pos[2]})
	right := norm3(cross3(fwd, [3]float64{0, 0, 1}))
	down := cross3(fwd, right)
	for r := 0; r < 3; r++ {
		rot[r] = [3]float64{right[r], down[r], fwd[r]}
	}
	return pos, rot
}

// position returns the lamp's centre in the world.
func (l domeLight) position() [3]float64 {
	az, el := l.azimuth*math.Pi/180, l.elevation*math.Pi/180
	return [3]float64{
		domeRadius * math.Cos(el) * math.Cos(az),
		domeRadius * math.Cos(el) * math.Sin(az),
		domeRadius * math.Sin(el),
	}
}

func cross3(a, b [3]float64) [3]float64 {
	return [3]float64{a[1]*b[2] - a[2]*b[1], a[2]*b[0] - a[0]*b[2], a[0]*b[1] - a[1]*b[0]}
}

func norm3(a [3]float64) [3]float64 {
	l := math.Sqrt(a[0]*a[0] + a[1]*a[1] + a[2]*a[2])
	return [3]float64{a[0] / l, a[1] / l, a[2] / l}
}
