package app

import (
	"context"
	"image"
	"image/color"
	"image/png"
	"os"
	"strconv"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"
	"fyne.io/fyne/v2/widget"

	"patina/fit"
)

// rewritePhoto rewrites photo i of the session's capture (a temporary
// copy) as a 16-bit PNG of the same size, each 16-bit code value v of the
// red, green and blue channels replaced by f(v).
func rewritePhoto(t *testing.T, s *Session, i int, f func(v uint32) uint16) {
	t.Helper()
	path := s.Capture.Resolve(s.Capture.Photos[i].File)
	in, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	src, err := png.Decode(in)
	in.Close()
	if err != nil {
		t.Fatal(err)
	}
	b := src.Bounds()
	dst := image.NewRGBA64(b)
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			r, g, bl, _ := src.At(x, y).RGBA()
			dst.SetRGBA64(x, y, color.RGBA64{f(r), f(g), f(bl), 0xffff})
		}
	}
	out, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := png.Encode(out, dst); err != nil {
		t.Fatal(err)
	}
	if err := out.Close(); err != nil {
		t.Fatal(err)
	}
}

// darkenPhoto rewrites photo i with every code value divided by div.
func darkenPhoto(t *testing.T, s *Session, i int, div uint32) {
	rewritePhoto(t, s, i, func(v uint32) uint16 { return uint16(v / div) })
}

// brightenPhoto rewrites photo i with every code value multiplied by mul
// and clamped at full scale.
func brightenPhoto(t *testing.T, s *Session, i int, mul uint32) {
	rewritePhoto(t, s, i, func(v uint32) uint16 { return uint16(min(v*mul, 0xffff)) })
}

// agreesWithFit checks that the overlay ov paints in colour c (nearly) the
// pixels the fit's own classifier (fit.RejectionMap on photo 1) gives
// reason r, where the overlay counted counted such pixels. The overlay's
// geometry tests (border, grazing) are its own, so a few pixels near the
// silhouette may differ; the bulk must agree.
func agreesWithFit(t *testing.T, s *Session, ov *image.RGBA, r fit.PixelReason, c color.RGBA, counted int, name string) {
	t.Helper()
	reasons, w, h, err := fit.RejectionMap(context.Background(), s.Capture, 1, fit.Options{})
	if err != nil {
		t.Fatal(err)
	}
	one := image.NewRGBA(image.Rect(0, 0, 1, 1))
	blend(one, 0, 0, c)
	inFit, both := 0, 0
	for k := 0; k < w*h; k++ {
		if reasons[k] != r {
			continue
		}
		inFit++
		if string(ov.Pix[4*k:4*k+4]) == string(one.Pix) {
			both++
		}
	}
	if inFit == 0 || float64(both) < 0.9*float64(inFit) || float64(both) < 0.9*float64(counted) {
		t.Errorf("fit.RejectionMap: %d %s pixels, the overlay %d, %d in common", inFit, name, counted, both)
	}
}

// overlayCount counts the overlay pixels drawn in reason colour c alone.
func overlayCount(ov *image.RGBA, c color.RGBA) int {
	one := image.NewRGBA(image.Rect(0, 0, 1, 1))
	blend(one, 0, 0, c)
	n := 0
	for k := 0; k < len(ov.Pix); k += 4 {
		if string(ov.Pix[k:k+4]) == string(one.Pix) {
			n++
		}
	}
	return n
}

// TestMaskOverlayUnderExposed checks the under-exposed reason of the mask
// overlay. Photo 1 of the fixture (north-sky, no mask file) is shown, then
// rewritten 50 times darker, which puts every lit pixel below the fit's
// noise floor (0.002 in linear radiance: sRGB code 1/50 decodes to about
// 0.0015, IEC 61966-2-1): each pixel kept (or saturated) before must now
// be under-exposed, every other reason must keep its count, and the overlay must paint
// exactly those pixels in the under-exposed colour. The fit's own pixel
// classifier (fit.RejectionMap, which the overlay mirrors) must find the
// same under-exposed pixels.
func TestMaskOverlayUnderExposed(t *testing.T) {
	s := openFixture(t)
	s.SelectPhoto(1)
	waitJob(t, s, "photo")
	s.SetOverlays(Overlays{Mask: true})
	waitJob(t, s, "overlay")
	before := s.PhotoRejections()
	if before.Kept == 0 {
		t.Fatalf("photo 1 keeps no pixel: %+v", before)
	}

	darkenPhoto(t, s, 1, 50)
	s.SelectPhoto(1) // reloads the file and rebuilds the overlay
	waitJob(t, s, "photo")
	waitJob(t, s, "overlay")
	after := s.PhotoRejections()
	if after.Total() != before.Total() {
		t.Fatalf("pixels on the object: %d before, %d after", before.Total(), after.Total())
	}
	want := before
	// Saturated pixels are no longer saturated, and dark like the rest.
	want.UnderExposed, want.Kept, want.Saturated, want.Clipped = before.UnderExposed+before.Kept+before.Saturated+before.Clipped, 0, 0, 0
	if after != want {
		t.Errorf("counts after darkening %+v, want %+v", after, want)
	}
	_, ov := s.PhotoImage()
	if n := overlayCount(ov, colUnderExp); n != after.UnderExposed {
		t.Errorf("%d pixels painted under-exposed, %d counted", n, after.UnderExposed)
	}

	agreesWithFit(t, s, ov, fit.PixelUnderExposed, colUnderExp, after.UnderExposed, "under-exposed")
}

// TestWorkbenchMaskLegendUnderExposed checks that the photo view lists
// the under-exposed reason in the mask legend, with its swatch and its
// count, headless.
func TestWorkbenchMaskLegendUnderExposed(t *testing.T) {
	wb := newTestWorkbench(t)
	s := wb.S
	wb.ShowView(ViewPhotos)
	darkenPhoto(t, s, 1, 50)
	s.SelectPhoto(1)
	waitJob(t, s, "photo")
	test.Tap(wb.photos.checks["mask"])
	waitJob(t, s, "overlay")
	rc := s.PhotoRejections()
	if !s.Overlays.Mask || rc.UnderExposed == 0 {
		t.Fatalf("mask overlay %v, counts %+v", s.Overlays.Mask, rc)
	}
	text := strings.ReplaceAll(wb.photos.legend.Text, "\n", " ")
	if !strings.Contains(text, "under-exposed "+strconv.Itoa(rc.UnderExposed)) {
		t.Errorf("legend %q does not give the under-exposed count %d", text, rc.UnderExposed)
	}
	found := false
	var walk func(o fyne.CanvasObject)
	walk = func(o fyne.CanvasObject) {
		if l, ok := o.(*widget.Label); ok && l.Text == "under-exposed" {
			found = true
		}
		switch c := o.(type) {
		case *fyne.Container:
			for _, k := range c.Objects {
				walk(k)
			}
		case fyne.Widget:
			for _, k := range test.WidgetRenderer(c).Objects() {
				walk(k)
			}
		}
	}
	walk(wb.photos.root)
	if !found {
		t.Error("no under-exposed swatch in the mask legend")
	}
}

// TestMaskOverlayClipped checks the "clipped, kept" reason of the mask
// overlay against the fit's own pixel classifier. Photo 1 of the fixture
// is rewritten 6 times brighter, which drives many channels to full scale:
// the fit keeps such a pixel, its clipped channels as lower bounds
// (fit.PixelClipped), and the overlay must paint the same pixels in the
// clipped colour, count exactly what it paints, and keep the total.
func TestMaskOverlayClipped(t *testing.T) {
	s := openFixture(t)
	s.SelectPhoto(1)
	waitJob(t, s, "photo")
	s.SetOverlays(Overlays{Mask: true})
	waitJob(t, s, "overlay")
	before := s.PhotoRejections()

	brightenPhoto(t, s, 1, 6)
	s.SelectPhoto(1)
	waitJob(t, s, "photo")
	waitJob(t, s, "overlay")
	after := s.PhotoRejections()
	if after.Total() != before.Total() {
		t.Fatalf("pixels on the object: %d before, %d after", before.Total(), after.Total())
	}
	if after.Clipped == 0 || after.Clipped <= before.Clipped {
		t.Fatalf("brightening clipped no more pixels: before %+v, after %+v", before, after)
	}
	_, ov := s.PhotoImage()
	if n := overlayCount(ov, colClipped); n != after.Clipped {
		t.Errorf("%d pixels painted clipped, %d counted", n, after.Clipped)
	}

	agreesWithFit(t, s, ov, fit.PixelClipped, colClipped, after.Clipped, "clipped")
}
