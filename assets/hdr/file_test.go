package hdr

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestReadWriteFile(t *testing.T) {
	dir := t.TempDir()
	m := testImage(12, 5, 4)
	for _, name := range []string{"a.hdr", "b.PIC", "c.pfm"} {
		path := filepath.Join(dir, name)
		if err := WriteFile(path, m); err != nil {
			t.Fatal(err)
		}
		got, err := ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		w, h, err := ReadFileConfig(path)
		if err != nil || w != 12 || h != 5 || got.Width != 12 || got.Height != 5 {
			t.Fatalf("%s: %dx%d / %dx%d %v", name, got.Width, got.Height, w, h, err)
		}
		if strings.HasSuffix(name, ".pfm") && got.Pix[17] != m.Pix[17] {
			t.Errorf("%s: PFM not exact", name)
		}
	}
	// A bad image or extension writes nothing, and the error names the file.
	bad := filepath.Join(dir, "bad.hdr")
	if err := WriteFile(bad, &Image{Width: 2, Height: 2, Pix: make([]float32, 5)}); err == nil || !strings.Contains(err.Error(), bad) {
		t.Errorf("short Pix: %v", err)
	}
	if err := WriteFile(filepath.Join(dir, "x.exr"), m); err == nil || !strings.Contains(err.Error(), "x.exr") {
		t.Errorf("unknown extension: %v", err)
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) != 3 {
		t.Errorf("directory holds %d entries after failed writes, want the 3 good files", len(entries))
	}
	if _, err := ReadFile(filepath.Join(dir, "a.png")); err == nil || !strings.Contains(err.Error(), "a.png") {
		t.Errorf("unknown extension on read: %v", err)
	}
}
