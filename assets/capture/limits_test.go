package capture

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestMaxPhotos checks that a capture listing more than MaxPhotos photos is
// refused by Load with the limit named at the photos array, and that one at
// the limit is not refused for its count; and that Validate refuses a
// capture built in memory over the limit.
func TestMaxPhotos(t *testing.T) {
	base, err := os.ReadFile(filepath.Join("..", "..", "testdata", "jar-small", "capture.json"))
	if err != nil {
		t.Fatal(err)
	}
	c0, err := Load(filepath.Join("..", "..", "testdata", "jar-small", "capture.json"))
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	write := func(n int) string {
		// The fixture with its photos array replaced by n copies of its
		// first photo entry, with the files made absolute.
		i := strings.Index(string(base), `"photos"`)
		if i < 0 {
			t.Fatal("fixture has no photos")
		}
		ph := c0.Photos[0]
		entry := `{"file": "` + filepath.ToSlash(c0.Resolve(ph.File)) + `", "camera": "` + ph.Camera + `", "lights": ["` + ph.Lights[0] + `"]}`
		var b strings.Builder
		b.WriteString(string(base[:i]))
		b.WriteString(`"photos": [`)
		for k := 0; k < n; k++ {
			if k > 0 {
				b.WriteString(",\n")
			}
			b.WriteString(entry)
		}
		b.WriteString("]}\n")
		p := filepath.Join(dir, "many.json")
		if err := os.WriteFile(p, []byte(strings.Replace(b.String(), `"mesh/`, `"`+filepath.ToSlash(c0.Dir)+`/mesh/`, 1)), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	_, err = Load(write(MaxPhotos + 1))
	var ce *Error
	if !errors.As(err, &ce) || len(ce.Problems) != 1 || ce.Problems[0].Path != "photos" ||
		!strings.Contains(ce.Problems[0].Msg, "10001 photos") || !strings.Contains(ce.Problems[0].Msg, "10000 (capture.MaxPhotos)") {
		t.Fatalf("Load of %d photos: %v", MaxPhotos+1, err)
	}
	c, err := Load(write(MaxPhotos))
	if err != nil {
		t.Fatalf("Load of %d photos: %v", MaxPhotos, err)
	}
	if len(c.Photos) != MaxPhotos {
		t.Fatalf("loaded %d photos", len(c.Photos))
	}
	for _, p := range c.Validate() {
		if p.Path == "photos" && strings.Contains(p.Msg, "MaxPhotos") {
			t.Fatalf("a capture at the limit is refused: %v", p)
		}
	}
	c.Photos = append(c.Photos, c.Photos[0])
	found := false
	for _, p := range c.Validate() {
		found = found || (p.Path == "photos" && p.Severity == SevError && strings.Contains(p.Msg, "capture.MaxPhotos"))
	}
	if !found {
		t.Fatal("Validate does not refuse a capture over MaxPhotos")
	}
}
