package main

import (
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"sync"
	"testing"

	"patina/assets/capture"
)

// TestMain removes the patina binary the reliability tests build (once,
// on first use) after all tests ran.
func TestMain(m *testing.M) {
	code := m.Run()
	if relBin.dir != "" {
		os.RemoveAll(relBin.dir)
	}
	os.Exit(code)
}

// relBin is the binary built for the tests that need a real process
// (SIGKILL, SIGINT, a file-size limit).
var relBin struct {
	once      sync.Once
	dir, path string
	err       error
	out       []byte
}

// relBinary builds the headless patina binary once per test run (CGO off,
// -tags nogui: the same code paths for every subcommand but the
// workbench, and a build that takes seconds rather than minutes).
func relBinary(t *testing.T) string {
	t.Helper()
	relBin.once.Do(func() {
		relBin.dir, relBin.err = os.MkdirTemp("", "patina-rel-bin-")
		if relBin.err != nil {
			return
		}
		relBin.path = filepath.Join(relBin.dir, "patina")
		cmd := exec.Command("go", "build", "-tags", "nogui", "-o", relBin.path, ".")
		cmd.Env = append(os.Environ(), "CGO_ENABLED=0")
		relBin.out, relBin.err = cmd.CombinedOutput()
	})
	if relBin.err != nil {
		t.Fatalf("go build: %v\n%s", relBin.err, relBin.out)
	}
	return relBin.path
}

// relCaptureCopy writes the jar-small fixture capture into dir with
// absolute paths to its mesh, photos and masks, so that outputs written
// beside it (the default materials path) land in dir, never in testdata.
// copies > 0 lists each fitting photo that many times more, as hard links
// (or copies) under new names: a longer fit of the same scene.
func relCaptureCopy(t *testing.T, dir string, copies int) string {
	t.Helper()
	src, _ := filepath.Abs(filepath.Join("..", "..", "testdata", "jar-small", "capture.json"))
	c, err := capture.Load(src)
	if err != nil {
		t.Fatal(err)
	}
	c.Mesh = filepath.ToSlash(c.Resolve(c.Mesh))
	base := append([]capture.Photo(nil), c.Photos...)
	for i := range c.Photos {
		c.Photos[i].File = filepath.ToSlash(c.Resolve(c.Photos[i].File))
		if c.Photos[i].Mask != "" {
			c.Photos[i].Mask = filepath.ToSlash(c.Resolve(c.Photos[i].Mask))
		}
	}
	for k := 0; k < copies; k++ {
		for i, p := range base {
			if p.Use != capture.UseFit {
				continue
			}
			q := c.Photos[i]
			name := filepath.Join(dir, "copy", filepath.Base(p.File))
			name = name[:len(name)-len(filepath.Ext(name))] + "-" + strconv.Itoa(k) + filepath.Ext(name)
			if err := os.MkdirAll(filepath.Dir(name), 0o755); err != nil {
				t.Fatal(err)
			}
			if err := os.Link(c.Photos[i].File, name); err != nil {
				data, err := os.ReadFile(c.Photos[i].File)
				if err != nil {
					t.Fatal(err)
				}
				if err := os.WriteFile(name, data, 0o644); err != nil {
					t.Fatal(err)
				}
			}
			q.File = filepath.ToSlash(name)
			c.Photos = append(c.Photos, q)
		}
	}
	out := filepath.Join(dir, "capture.json")
	if err := c.Save(out); err != nil {
		t.Fatal(err)
	}
	return out
}
