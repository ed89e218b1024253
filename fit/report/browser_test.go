package report

import (
	"context"
	"image/png"
	"os"
	"os/exec"
	"path/filepath"
	"testing"
	"time"

	"patina/render/refcheck"
)

// TestReportOpensInChromium renders the fixture's report page in a real
// browser (Debian's chromium, headless) and checks that the screenshot shows
// a page: not one flat colour, with dark text on a light ground and the
// coloured verdict badge. The page's pictures and hashes are checked by
// checkPage. Set PATINA_SCREENSHOT to keep the screenshot at that path.
func TestReportOpensInChromium(t *testing.T) {
	bin := refcheck.RequireCommand(t, "chromium", "chromium")
	r, dir := buildJarSmall(t, jarSmallTruth(), Options{SPP: 8, Threads: 2})
	htmlPath := filepath.Join(dir, "report.html")
	if _, err := r.WriteFiles(htmlPath); err != nil {
		t.Fatal(err)
	}
	page, err := os.ReadFile(htmlPath)
	if err != nil {
		t.Fatal(err)
	}
	checkPage(t, page, r)

	shot := filepath.Join(dir, "screenshot.png")
	if p := os.Getenv("PATINA_SCREENSHOT"); p != "" {
		shot = p
	}
	abs, err := filepath.Abs(htmlPath)
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithTimeout(context.Background(), 3*time.Minute)
	defer cancel()
	cmd := exec.CommandContext(ctx, bin, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
		"--disable-background-networking", "--disable-component-update", "--disable-sync",
		"--user-data-dir="+t.TempDir(), "--screenshot="+shot, "--window-size=1200,3000", "file://"+abs)
	out, err := cmd.CombinedOutput()
	if err != nil {
		t.Fatalf("chromium: %v\n%s", err, out)
	}
	f, err := os.Open(shot)
	if err != nil {
		t.Fatalf("no screenshot: %v\n%s", err, out)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatalf("screenshot: %v", err)
	}
	b := img.Bounds()
	if b.Dx() != 1200 || b.Dy() != 3000 {
		t.Errorf("screenshot is %v, want 1200x3000", b)
	}
	var dark, light, green int
	for y := b.Min.Y; y < b.Max.Y; y += 2 {
		for x := b.Min.X; x < b.Max.X; x += 2 {
			r, g, bl, _ := img.At(x, y).RGBA()
			r8, g8, b8 := r>>8, g>>8, bl>>8
			switch {
			case r8 < 80 && g8 < 80 && b8 < 80:
				dark++
			case r8 > 230 && g8 > 230 && b8 > 230:
				light++
			}
			// The PASS badge's green (#1f6f43) or the FAIL badge's red (#a32a2a).
			if (g8 > r8+50 && g8 > b8+20) || (r8 > g8+80 && r8 > b8+80) {
				green++
			}
		}
	}
	n := (b.Dx() / 2) * (b.Dy() / 2)
	t.Logf("screenshot %s: %.1f%% dark, %.1f%% light, %d badge-coloured samples", shot, 100*float64(dark)/float64(n), 100*float64(light)/float64(n), green)
	if dark < n/500 || light < n/3 || green < 20 {
		t.Errorf("the screenshot does not look like the rendered page (dark %d, light %d, badge %d of %d samples)", dark, light, green, n)
	}
}
