package capture

import (
	"bytes"
	"image"
	"os"
	"path/filepath"
	"testing"

	"golang.org/x/image/tiff"
	"image/png"
)

// TestJarSmallFixture regenerates testdata/jar-small and checks the
// committed copy against it: the generator is the fixture's documentation.
func TestJarSmallFixture(t *testing.T) {
	if *writeFixture {
		if err := makeJarSmall(fixtureDir); err != nil {
			t.Fatal(err)
		}
		t.Log("rewrote", fixtureDir)
	}
	dir := t.TempDir()
	if err := makeJarSmall(dir); err != nil {
		t.Fatal(err)
	}
	for _, f := range []string{"capture.json", "mesh/jar.ply"} {
		got, err := os.ReadFile(filepath.Join(fixtureDir, f))
		if err != nil {
			t.Fatal(err)
		}
		want, _ := os.ReadFile(filepath.Join(dir, f))
		if !bytes.Equal(got, want) {
			t.Errorf("%s differs from the generator's output; rerun with -write-fixture", f)
		}
	}
	c := fixtureCapture()
	files := []string{"masks/north.png"}
	for _, ph := range c.Photos {
		files = append(files, ph.File)
	}
	for _, f := range files {
		a, errA := decodeAny(filepath.Join(fixtureDir, f))
		b, errB := decodeAny(filepath.Join(dir, f))
		if errA != nil || errB != nil {
			t.Fatalf("%s: %v %v", f, errA, errB)
		}
		// Floating-point contraction may differ between platforms, so
		// allow a code value of difference in a few pixels.
		bad := 0
		bb := a.Bounds()
		for y := bb.Min.Y; y < bb.Max.Y; y++ {
			for x := bb.Min.X; x < bb.Max.X; x++ {
				r1, g1, b1, _ := a.At(x, y).RGBA()
				r2, g2, b2, _ := b.At(x, y).RGBA()
				if absDiff(r1, r2) > 257 || absDiff(g1, g2) > 257 || absDiff(b1, b2) > 257 {
					bad++
				}
			}
		}
		if bad > 0 || a.Bounds() != b.Bounds() {
			t.Errorf("%s: %d pixels differ from the generator's output by more than one code value", f, bad)
		}
	}
}

func absDiff(a, b uint32) uint32 {
	if a > b {
		return a - b
	}
	return b - a
}

func decodeAny(path string) (image.Image, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	if filepath.Ext(path) == ".tif" {
		return tiff.Decode(f)
	}
	return png.Decode(f)
}
