package photo

import (
	"math"
	"path/filepath"
	"testing"

	"patina/render/refcheck"
)

// Files written by OpenCV (Debian python3-opencv, cv2.imwrite) with known
// linear 16-bit and 8-bit ramps decode to exactly those code values.
// OpenCV stores colour as B, G, R; the script writes the ramps so that the
// red channel of the file holds R below.
const opencvRampScript = `
import sys, numpy as np, cv2
d = sys.argv[1]
h, w = 37, 53
y, x = np.mgrid[0:h, 0:w].astype(np.int64)
R = (x * 211 + y * 1709) % 65536
G = (x * 1301 + y * 331) % 65536
B = 65535 - R
bgr16 = np.dstack([B, G, R]).astype(np.uint16)
grey16 = ((x * 977 + y * 1531) % 65536).astype(np.uint16)
bgr8 = (bgr16 >> 8).astype(np.uint8)
for name, img in [("rgb16.png", bgr16), ("rgb16.tif", bgr16), ("grey16.png", grey16),
                  ("grey16.tif", grey16), ("rgb8.png", bgr8), ("rgb8.tif", bgr8)]:
    assert cv2.imwrite(d + "/" + name, img), name
print("ok")
`

func TestOpenCVRamps(t *testing.T) {
	refcheck.RequirePython(t, map[string]string{"cv2": "python3-opencv", "numpy": "python3-numpy"})
	dir := t.TempDir()
	if out := refcheck.RunPython(t, opencvRampScript, dir); string(out) != "ok\n" {
		t.Fatalf("script said %q", out)
	}
	const w, h = 53, 37
	ramp := func(x, y int) (r, g, b, grey int) {
		r = (x*211 + y*1709) % 65536
		g = (x*1301 + y*331) % 65536
		return r, g, 65535 - r, (x*977 + y*1531) % 65536
	}
	for _, c := range []struct {
		file  string
		bits  int
		grey  bool
		depth int
	}{
		{"rgb16.png", 16, false, 16}, {"rgb16.tif", 16, false, 16},
		{"grey16.png", 16, true, 16}, {"grey16.tif", 16, true, 16},
		{"rgb8.png", 8, false, 8}, {"rgb8.tif", 8, false, 8},
	} {
		path := filepath.Join(dir, c.file)
		info, err := Inspect(path)
		if err != nil {
			t.Fatal(err)
		}
		if info.Width != w || info.Height != h || info.BitDepth != c.depth || (info.Channels == 1) != c.grey {
			t.Errorf("%s: header %+v", c.file, info)
		}
		img, err := Load(path, Decoding{Encoding: "linear", SaturationThreshold: 2})
		if err != nil {
			t.Fatal(err)
		}
		bad := 0
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				r, g, b, grey := ramp(x, y)
				want := [3]int{r, g, b}
				if c.grey {
					want = [3]int{grey, grey, grey}
				}
				maxCode := 65535.0
				if c.bits == 8 {
					for k := range want {
						want[k] >>= 8
					}
					maxCode = 255
				}
				gr, gg, gb := img.RGB(x, y)
				for k, got := range []float32{gr, gg, gb} {
					if e := float64(want[k]) / maxCode; math.Abs(float64(got)-e) > 1e-7 {
						if bad < 5 {
							t.Errorf("%s: pixel (%d,%d) channel %d = %v, want code %d = %v", c.file, x, y, k, got, want[k], e)
						}
						bad++
					}
				}
			}
		}
	}
}
