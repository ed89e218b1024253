package metrics

import (
	"bytes"
	"image"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"testing"

	"patina/render/colour"
)

// The sequential scale: lightness rises monotonically, equal steps of the
// data are equal steps of Delta E 2000 (the point of a perceptually uniform
// scale), and 8-bit sRGB reproduces the intended colours (little gamut
// clipping).
func TestSequentialScaleUniform(t *testing.T) {
	s := sequentialScale()
	checkUniform(t, "sequential", s.lab, +1)
	checkGamut(t, "sequential", s)
}

// The diverging scale: neutral at zero, lightness falling away from zero on
// both arms at the same rate, each arm uniform in Delta E 2000.
func TestDivergingScale(t *testing.T) {
	s := divergingScale()
	n := len(s.lab)
	if n%2 != 1 {
		t.Fatalf("diverging scale has %d entries; zero needs an entry of its own", n)
	}
	mid := n / 2
	if c := s.lab[mid]; math.Hypot(c.A, c.B) > 1e-9 {
		t.Errorf("zero maps to %v, want a neutral colour", c)
	}
	if c := s.rgba[mid]; c.R != c.G || c.G != c.B {
		t.Errorf("zero maps to %v, want grey", c)
	}
	checkUniform(t, "diverging, negative arm (from zero)", reverse(s.lab[:mid+1]), -1)
	checkUniform(t, "diverging, positive arm (from zero)", s.lab[mid:], -1)
	for k := 0; k <= mid; k++ {
		if d := math.Abs(s.lab[mid-k].L - s.lab[mid+k].L); d > 2 {
			t.Errorf("arms differ in lightness by %.2f at %d steps from zero", d, k)
			break
		}
	}
	checkGamut(t, "diverging", s)
}

func reverse(v []colour.Lab) []colour.Lab {
	out := make([]colour.Lab, len(v))
	for i := range v {
		out[len(v)-1-i] = v[i]
	}
	return out
}

// checkUniform: L* strictly monotonic in the given direction and consecutive
// Delta E 2000 steps within 1 % of their mean.
func checkUniform(t *testing.T, name string, lab []colour.Lab, dir float64) {
	t.Helper()
	var steps []float64
	mean := 0.0
	for i := 1; i < len(lab); i++ {
		if (lab[i].L-lab[i-1].L)*dir <= 0 {
			t.Errorf("%s: lightness not monotonic at %d: %.3f then %.3f", name, i, lab[i-1].L, lab[i].L)
		}
		d := colour.DeltaE2000(lab[i-1], lab[i])
		steps = append(steps, d)
		mean += d
	}
	mean /= float64(len(steps))
	for i, d := range steps {
		if math.Abs(d-mean) > 0.01*mean {
			t.Errorf("%s: step %d is %.4f dE00, mean step %.4f", name, i, d, mean)
		}
	}
}

// checkGamut: the 8-bit colour of each entry is within 2 dE00 of the
// intended CIELAB colour (one entry is about 0.3 dE00 from the next).
func checkGamut(t *testing.T, name string, s *colourScale) {
	t.Helper()
	worst := 0.0
	for i, c := range s.rgba {
		got := colour.LinearRGBToLab(colour.SRGBToLinear(float64(c.R)/255), colour.SRGBToLinear(float64(c.G)/255), colour.SRGBToLinear(float64(c.B)/255))
		worst = math.Max(worst, colour.DeltaE2000(got, s.lab[i]))
	}
	if worst > 2 {
		t.Errorf("%s: an entry is %.2f dE00 from its intended colour (gamut clipping)", name, worst)
	}
	t.Logf("%s: largest 8-bit departure %.2f dE00", name, worst)
}

// The pictures: sizes, the hatch where pixels were not compared, the map
// colours where they were, the "simulation" label on the render panel, and a
// legend with ink in it. With PATINA_MAPS_DIR set the PNGs are kept there
// for a look.
func TestMapImages(t *testing.T) {
	p := makePair(320, 240, 11, true)
	res, maps, err := Compare(p.render, p.photo, p.w, p.h, p.valid, p.segment, []string{"left", "middle", "right", "base"}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	w, h := p.w, p.h
	if b := maps.DeltaEImage.Bounds(); b.Dx() < w || b.Dy() <= h {
		t.Fatalf("Delta E image %v, want at least %dx%d plus a legend", b, w, h)
	}
	if b := maps.Strip.Bounds(); b.Dx() < 3*w || b.Dy() <= h {
		t.Fatalf("strip %v, want three %dx%d panels and a legend", b, w, h)
	}
	seq := sequentialScale()
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			got := maps.DeltaEImage.RGBAAt(x, y)
			if !p.valid[i] {
				if got != hatchA && got != hatchB {
					t.Fatalf("pixel (%d, %d) not compared but drawn %v", x, y, got)
				}
				continue
			}
			if want := seq.at(float64(maps.DeltaE[i]) / maps.DeltaEScale); got != want {
				t.Fatalf("pixel (%d, %d) dE00 %v drawn %v, want %v", x, y, maps.DeltaE[i], got, want)
			}
		}
	}
	// The label sits in the top-left corner of the render panel: there the
	// strip differs from the plain display image.
	plain := displayImage(p.render, w, h, 1, res.Peak)
	x0 := w + max(2, fontSize(h)/4)
	changed := 0
	for y := 0; y < fontSize(h)*2; y++ {
		for x := x0; x < x0+fontSize(h)*5; x++ {
			if maps.Strip.RGBAAt(x, y) != plain.RGBAAt(x-x0, y) {
				changed++
			}
		}
	}
	if changed < 50 {
		t.Errorf("no label on the render panel (%d pixels changed)", changed)
	}
	for name, img := range map[string]*image.RGBA{"de": maps.DeltaEImage, "dl": maps.DeltaLImage, "strip": maps.Strip} {
		dark := 0
		for y := h; y < img.Bounds().Dy(); y++ {
			for x := 0; x < img.Bounds().Dx(); x++ {
				if c := img.RGBAAt(x, y); c.R < 60 && c.G < 60 && c.B < 60 {
					dark++
				}
			}
		}
		if dark < 200 {
			t.Errorf("%s: legend has almost no text (%d dark pixels)", name, dark)
		}
	}
	if dir := os.Getenv("PATINA_MAPS_DIR"); dir != "" {
		for name, img := range map[string]*image.RGBA{"deltae.png": maps.DeltaEImage, "deltal.png": maps.DeltaLImage, "strip.png": maps.Strip} {
			var b bytes.Buffer
			if err := png.Encode(&b, img); err != nil {
				t.Fatal(err)
			}
			if err := os.WriteFile(filepath.Join(dir, name), b.Bytes(), 0o644); err != nil {
				t.Fatal(err)
			}
		}
	}
}

func TestNiceStepAndTicks(t *testing.T) {
	for _, c := range []struct {
		span float64
		n    int
		want float64
	}{{10, 5, 2}, {10, 10, 1}, {20, 4, 5}, {3, 6, 0.5}, {100, 3, 50}} {
		if got := niceStep(c.span, c.n); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("niceStep(%v, %d) = %v, want %v", c.span, c.n, got, c.want)
		}
	}
	if s := formatTick(-5, true); s != "\u22125" {
		t.Errorf("formatTick(-5) = %q", s)
	}
	if s := formatTick(2.5, true); s != "+2.5" {
		t.Errorf("formatTick(2.5) = %q", s)
	}
}

// With PATINA_MAPS_DIR set, also keep the pictures of a full-size pair.
func TestMapImagesFullSize(t *testing.T) {
	dir := os.Getenv("PATINA_MAPS_DIR")
	if dir == "" {
		t.Skip("set PATINA_MAPS_DIR to keep the full-size pictures")
	}
	p := benchPair()
	_, maps, err := Compare(p.render, p.photo, p.w, p.h, p.valid, p.segment, nil, Options{})
	if err != nil {
		t.Fatal(err)
	}
	for name, img := range map[string]*image.RGBA{"full-deltae.png": maps.DeltaEImage, "full-deltal.png": maps.DeltaLImage, "full-strip.png": maps.Strip} {
		var b bytes.Buffer
		if err := png.Encode(&b, img); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, name), b.Bytes(), 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

// The 8-bit table against rounding the exact sRGB curve (IEC 61966-2-1).
func TestTo8(t *testing.T) {
	off := 0
	for i := 0; i <= 1000000; i++ {
		v := float64(i) / 1000000
		want := int(math.Round(255 * colour.LinearToSRGB(v)))
		got := int(to8(v))
		if got != want {
			off++
			if got-want > 1 || want-got > 1 {
				t.Fatalf("to8(%v) = %d, sRGB curve rounds to %d", v, got, want)
			}
		}
	}
	if off > 5000 { // 0.5 %: only values within 1/131070 of a rounding threshold may move
		t.Errorf("%d of 1000001 values one code off", off)
	}
	if to8(-1) != 0 || to8(2) != 255 || to8(math.NaN()) != 0 {
		t.Error("to8 does not clip")
	}
}

// TestImageBlock: with Options.ImageBlock the pictures shrink by the block
// size (rounded up), the statistics do not change, and each picture pixel
// is the box mean of its block (box reduction, common practice): the mean
// linear value for the simulation panel, the mean Delta E 2000 of the
// compared pixels for the map, hatched where none was compared.
func TestImageBlock(t *testing.T) {
	w, h, blk := 101, 77, 3
	p := makePair(w, h, 5, true)
	full, fm, err := Compare(p.render, p.photo, w, h, p.valid, p.segment, nil, Options{})
	if err != nil {
		t.Fatal(err)
	}
	small, sm, err := Compare(p.render, p.photo, w, h, p.valid, p.segment, nil, Options{ImageBlock: blk})
	if err != nil {
		t.Fatal(err)
	}
	if full.Stats() != small.Stats() || len(sm.DeltaE) != w*h {
		t.Fatalf("ImageBlock changed the statistics or the per-pixel maps: %+v vs %+v", full.Stats(), small.Stats())
	}
	bw, bh := (w+blk-1)/blk, (h+blk-1)/blk
	if b := sm.DeltaEImage.Bounds(); b.Dx() < bw || b.Dy() <= bh || b.Dy() >= fm.DeltaEImage.Bounds().Dy() {
		t.Errorf("map picture %v for %dx%d blocks (full size %v)", b, bw, bh, fm.DeltaEImage.Bounds())
	}
	seq := sequentialScale()
	gap := max(2, fontSize(bh)/4)
	hatched := 0
	for by := 0; by < bh; by++ {
		for bx := 0; bx < bw; bx++ {
			var se float64
			var lin [3]float64
			n, cnt := 0, 0
			for y := by * blk; y < min(h, (by+1)*blk); y++ {
				for x := bx * blk; x < min(w, (bx+1)*blk); x++ {
					i := y*w + x
					cnt++
					for c := 0; c < 3; c++ {
						if v := float64(p.render[3*i+c]); !math.IsNaN(v) {
							lin[c] += v
						}
					}
					if d := fm.DeltaE[i]; !math.IsNaN(float64(d)) {
						se += float64(d)
						n++
					}
				}
			}
			got := sm.DeltaEImage.RGBAAt(bx, by)
			if n == 0 {
				if got != hatchA && got != hatchB {
					t.Fatalf("block (%d, %d) has no compared pixel but is drawn %v", bx, by, got)
				}
				hatched++
			} else if want := seq.at(se / float64(n) / sm.DeltaEScale); got != want {
				t.Fatalf("block (%d, %d): map %v, want %v (mean dE00 %.3f)", bx, by, got, want, se/float64(n))
			}
			// The simulation panel, away from its label.
			if by < 2*fontSize(bh) {
				continue
			}
			sim := sm.Strip.RGBAAt(bw+gap+bx, by)
			for c, v := range []uint8{sim.R, sim.G, sim.B} {
				if want := to8(lin[c] / float64(cnt) / small.Peak); v != want {
					t.Fatalf("block (%d, %d) channel %d: simulation panel %d, want %d", bx, by, c, v, want)
				}
			}
		}
	}
	if hatched == 0 {
		t.Error("no hatched block: the test pair should have uncompared corners")
	}
	if _, _, err := Compare(p.render, p.photo, w, h, p.valid, p.segment, nil, Options{ImageBlock: MaxImageBlock + 1}); err == nil {
		t.Error("ImageBlock beyond the limit accepted")
	}
}
