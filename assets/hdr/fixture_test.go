package hdr

import (
	"math"
	"path/filepath"
	"testing"
)

const fixtureDir = "../../testdata/hdr"

// fixtureValue is fixture_value of testdata/hdr/make_fixtures.py, which wrote
// the opencv-* fixtures with OpenCV 4.6 (Debian python3-opencv).
func fixtureValue(x, y, c int) float32 {
	if x == 0 && y == 0 || x == 1 && y == 0 && c > 0 {
		return 0
	}
	return float32(float64((x*7+y*13+c*29)%97+1) / 16 * math.Ldexp(1, (x+y)%7-3))
}

// TestOpenCVFixturesRGBE reads .hdr files written by OpenCV (run-length at
// width 37, flat at width 6). OpenCV's writer truncates mantissas (float2rgbe
// in rgbe.cpp, like Radiance's setcolr), so Patina must read
// (floor(v / step) + 0.5) step for every value v that was written. Unlike
// the live cross-checks this runs without OpenCV installed.
func TestOpenCVFixturesRGBE(t *testing.T) {
	for _, f := range []struct {
		name string
		w, h int
	}{{"opencv-rle-37x5.hdr", 37, 5}, {"opencv-flat-6x4.hdr", 6, 4}} {
		m, err := ReadFile(filepath.Join(fixtureDir, f.name))
		if err != nil {
			t.Fatal(err)
		}
		if m.Width != f.w || m.Height != f.h {
			t.Fatalf("%s: %dx%d", f.name, m.Width, m.Height)
		}
		for y := 0; y < f.h; y++ {
			for x := 0; x < f.w; x++ {
				v := [3]float32{fixtureValue(x, y, 0), fixtureValue(x, y, 1), fixtureValue(x, y, 2)}
				s := rgbeStep(v[0], v[1], v[2])
				r, g, b := m.RGB(x, y)
				for c, got := range [3]float32{r, g, b} {
					want := 0.0
					if s > 0 {
						want = (math.Floor(float64(v[c])/s) + 0.5) * s
					}
					if float64(got) != want {
						t.Fatalf("%s (%d, %d) channel %d: got %g, want %g (written %g)", f.name, x, y, c, got, want, v[c])
					}
				}
			}
		}
	}
}

// TestOpenCVFixturesPFM reads PFM files written by OpenCV (colour and grey,
// little-endian, rows bottom to top): the float32 values must be exact.
func TestOpenCVFixturesPFM(t *testing.T) {
	for _, f := range []struct {
		name     string
		w, h, ch int
	}{{"opencv-colour-7x3.pfm", 7, 3, 3}, {"opencv-grey-5x4.pfm", 5, 4, 1}} {
		m, err := ReadFile(filepath.Join(fixtureDir, f.name))
		if err != nil {
			t.Fatal(err)
		}
		if m.Width != f.w || m.Height != f.h {
			t.Fatalf("%s: %dx%d", f.name, m.Width, m.Height)
		}
		for y := 0; y < f.h; y++ {
			for x := 0; x < f.w; x++ {
				r, g, b := m.RGB(x, y)
				for c, got := range [3]float32{r, g, b} {
					cc := c
					if f.ch == 1 {
						cc = 0
					}
					if want := fixtureValue(x, y, cc); got != want {
						t.Fatalf("%s (%d, %d) channel %d: got %g, want %g", f.name, x, y, c, got, want)
					}
				}
			}
		}
	}
}
