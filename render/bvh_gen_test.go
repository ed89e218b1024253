package render

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"testing"
)

// TestGeneratedTraversalUpToDate runs the generator in a scratch folder and
// demands that its outputs are the committed bvh_octants.go and
// bvh_simd_octants.go, so an edit of the templates cannot be forgotten (or
// a generated file edited by hand).
func TestGeneratedTraversalUpToDate(t *testing.T) {
	if testing.Short() {
		t.Skip("compiles and runs the generator")
	}
	src, err := os.ReadFile("bvh_gen.go")
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "bvh_gen.go"), src, 0o644); err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(filepath.Join(runtime.GOROOT(), "bin", "go"), "run", "bvh_gen.go")
	cmd.Dir = dir
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("go run bvh_gen.go: %v\n%s", err, out)
	}
	for _, name := range []string{"bvh_octants.go", "bvh_simd_octants.go"} {
		got, err := os.ReadFile(filepath.Join(dir, name))
		if err != nil {
			t.Fatal(err)
		}
		want, err := os.ReadFile(name)
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(got, want) {
			t.Fatalf("%s differs from what bvh_gen.go writes: run `go generate` in render", name)
		}
	}
}
