package photo

import (
	"errors"
	"os"
	"path/filepath"
	"testing"
)

// FuzzLoadPhoto decodes arbitrary bytes as a photo file. No input may
// panic; every refusal is one of the package's typed errors naming the
// file; every accepted image has consistent sizes. Seeds: the photos of
// testdata/jar-small and the malformed photos of testdata/bad.
func FuzzLoadPhoto(f *testing.F) {
	seeds, _ := filepath.Glob("../../testdata/jar-small/photos/*")
	bad, _ := filepath.Glob("../../testdata/bad/photo-*")
	for _, s := range append(append(seeds, "../../testdata/jar-small/masks/north.png"), bad...) {
		if data, err := os.ReadFile(s); err == nil {
			f.Add(data)
		}
	}
	// Keep every decoded image small enough for a fuzzing worker; the
	// limit itself is tested by TestRefusesHugeImageBeforeDecoding.
	maxPixels = 1 << 20
	f.Fuzz(func(t *testing.T, data []byte) {
		p := filepath.Join(t.TempDir(), "photo")
		if err := os.WriteFile(p, data, 0o644); err != nil {
			t.Fatal(err)
		}
		img, err := Load(p, Decoding{Encoding: "linear", BlackLevel: 0.01, WhiteLevel: 0.9, Exposure: 2})
		if err != nil {
			var fe *FormatError
			var ue *UnsupportedError
			var le *LimitError
			if !errors.As(err, &fe) && !errors.As(err, &ue) && !errors.As(err, &le) {
				t.Fatalf("untyped error %T: %v", err, err)
			}
			return
		}
		if len(img.Pix) != 3*img.Width*img.Height || len(img.Saturated) != img.Width*img.Height {
			t.Fatalf("inconsistent image %dx%d, %d samples", img.Width, img.Height, len(img.Pix))
		}
		if _, err := LoadMask(p, img.Width, img.Height); err != nil {
			t.Fatalf("decodes as a photo but not as a mask: %v", err)
		}
	})
}
