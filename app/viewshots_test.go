package app

import (
	"image/png"
	"os"
	"path/filepath"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"
)

// TestViewShots draws every view with the Fyne test driver's software
// painter and writes the pictures to $PATINA_VIEW_SHOTS, for a look at the
// layout without a display (.ci/gui-shot.sh takes the real window under
// Xvfb). PATINA_VIEW_CAPTURE and PATINA_VIEW_MATERIALS choose the files
// (default: the jar-small fixture). Skipped when PATINA_VIEW_SHOTS is unset.
func TestViewShots(t *testing.T) {
	dir := os.Getenv("PATINA_VIEW_SHOTS")
	if dir == "" {
		t.Skip("set PATINA_VIEW_SHOTS to a folder to draw the views")
	}
	capPath := os.Getenv("PATINA_VIEW_CAPTURE")
	if capPath == "" {
		capPath = fixture
	}
	a := test.NewTempApp(t)
	q := make(chan func(), 4096)
	wb := New(t.Context(), a, Options{Capture: capPath, Materials: os.Getenv("PATINA_VIEW_MATERIALS"), Post: func(f func()) { q <- f }})
	wb.S.queue = q
	wb.Win.Resize(fyne.NewSize(1280, 780))
	if err := waitJob(t, wb.S, "open"); err != nil {
		t.Fatal(err)
	}
	waitJob(t, wb.S, "photo")
	save := func(name string) {
		drain(q)
		img := wb.Win.Canvas().Capture()
		f, err := os.Create(filepath.Join(dir, name+".png"))
		if err != nil {
			t.Fatal(err)
		}
		if err := png.Encode(f, img); err != nil {
			t.Fatal(err)
		}
		f.Close()
	}
	save("1-capture")
	wb.ShowView(ViewPhotos)
	wb.S.SetOverlays(Overlays{Segments: true, Lights: true})
	waitJob(t, wb.S, "overlay")
	save("2-photos")
	wb.S.SetOverlays(Overlays{Mask: true})
	waitJob(t, wb.S, "overlay")
	save("3-mask")
	wb.ShowView(ViewMaterials)
	save("4-materials")
	wb.ShowView(ViewFit)
	save("5-fit")
	wb.S.Relight.SPP = 8
	wb.ShowView(ViewRelight)
	waitJob(t, wb.S, "relight")
	save("6-relight")
	wb.ShowView(ViewCompare)
	if err := waitJob(t, wb.S, "compare"); err != nil {
		t.Fatal(err)
	}
	save("7-compare")
	wb.S.CycleCompareMode()
	save("8-wipe")
	wb.S.CycleCompareMode()
	save("9-deltae")
	wb.cancel()
	wb.S.jobs.cancelAll()
}
