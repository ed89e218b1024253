package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"patina/assets/materials"
	"patina/brdf"
)

func TestExportFixture(t *testing.T) {
	dir := t.TempDir()
	capPath, _ := filepath.Abs(filepath.Join("..", "..", "testdata", "jar-small", "capture.json"))
	mf := &materials.File{Version: materials.Version, Capture: capPath, Segments: []materials.Segment{
		materials.FromParams("glaze", brdf.Params{Kind: brdf.Dielectric, Diffuse: brdf.RGB{0.1, 0.3, 0.25}, Specular: brdf.RGB{0.04, 0.04, 0.04}, Roughness: 0.2}),
		materials.FromParams("gilding", brdf.Params{Kind: brdf.Metal, Specular: brdf.RGB{0.9, 0.7, 0.3}, Roughness: 0.4}),
		materials.FromParams("grey card", brdf.Params{Kind: brdf.Dielectric, Diffuse: brdf.RGB{0.18, 0.18, 0.18}, Specular: brdf.RGB{0.02, 0.02, 0.02}, Roughness: 0.9}),
	}}
	mp := filepath.Join(dir, "m.json")
	if err := mf.Save(mp); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "jar.glb")
	code, stdout, stderr := runCLI(t, "export", capPath, "-materials", mp, "-o", out)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	for _, f := range []string{out, filepath.Join(dir, "jar.csv")} {
		if st, err := os.Stat(f); err != nil || st.Size() == 0 {
			t.Errorf("%s not written", f)
		}
	}
	if !strings.Contains(stdout, "gilding") || !strings.Contains(stdout, "Smith") {
		t.Errorf("summary does not describe the mapping:\n%s", stdout)
	}
	csv, _ := os.ReadFile(filepath.Join(dir, "jar.csv"))
	if !strings.HasPrefix(string(csv), "segment,model,diffuse_r") || strings.Count(string(csv), "\n") != 4 {
		t.Errorf("CSV:\n%s", csv)
	}

	// Bad input: exit 2, no output file.
	bad := filepath.Join(dir, "bad.glb")
	if code, _, _ := runCLI(t, "export", capPath, "-o", bad); code != 2 {
		t.Errorf("missing -materials: exit %d, want 2", code)
	}
	if code, _, errOut := runCLI(t, "export", capPath, "-materials", mp, "-up", "+w", "-o", bad); code != 2 || !strings.Contains(errOut, "+w") {
		t.Errorf("bad -up: exit %d, %q", code, errOut)
	}
	if _, err := os.Stat(bad); err == nil {
		t.Error("a failed export left an output file")
	}
}
