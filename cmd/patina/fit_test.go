package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"patina/assets/materials"
)

// TestFitCommand runs `patina fit` on the small fixture capture: exit 0,
// the materials file written and readable, the table printed; -json gives
// a parseable result; bad arguments exit 2.
func TestFitCommand(t *testing.T) {
	capPath := filepath.Join("..", "..", "testdata", "jar-small", "capture.json")
	dir := t.TempDir()
	out := filepath.Join(dir, "m.json")
	var stdout, stderr bytes.Buffer
	if code := run(context.Background(), []string{"fit", capPath, "-o", out, "-progress", "never", "-threads", "2"}, &stdout, &stderr); code != 0 {
		t.Fatalf("exit %d: %s", code, stderr.String())
	}
	for _, want := range []string{"segment", "glaze", "gilding", "grey card", "wrote " + out} {
		if !strings.Contains(stdout.String(), want) {
			t.Errorf("table lacks %q:\n%s", want, stdout.String())
		}
	}
	mf, err := materials.Load(out)
	if err != nil {
		t.Fatal(err)
	}
	if len(mf.Segments) != 3 || mf.Fit == nil || mf.Fit.Optimizer != "lm" {
		t.Errorf("materials file: %+v", mf)
	}

	stdout.Reset()
	stderr.Reset()
	out2 := filepath.Join(dir, "m2.json")
	if code := run(context.Background(), []string{"fit", "-json", "-optimizer", "adam", "-o", out2, capPath, "-progress", "never"}, &stdout, &stderr); code != 0 {
		t.Fatalf("-json: exit %d: %s", code, stderr.String())
	}
	var j map[string]any
	if err := json.Unmarshal(stdout.Bytes(), &j); err != nil {
		t.Fatalf("-json output: %v\n%s", err, stdout.String())
	}
	if j["optimizer"] != "adam" || j["segments"] == nil {
		t.Errorf("-json output: %v", j)
	}
	if _, err := os.Stat(out2); err != nil {
		t.Error(err)
	}

	for _, args := range [][]string{
		{"fit"},
		{"fit", capPath, "-optimizer", "newton"},
		{"fit", capPath, "-samples", "0"},
		{"fit", filepath.Join(dir, "missing.json")},
	} {
		stdout.Reset()
		stderr.Reset()
		if code := run(context.Background(), args, &stdout, &stderr); code != 2 {
			t.Errorf("%v: exit %d, want 2 (%s)", args, code, stderr.String())
		}
	}
}

// TestFitCommandLocks fits the fixture once, marks the glaze roughness as
// locked at a value of its own in the written file, and fits again with
// -locks: the new file holds exactly that value (sigma 0), lists it as
// locked, and records a loss per pass. A lock the model cannot take exits 2
// naming the file and the JSON path.
func TestFitCommandLocks(t *testing.T) {
	capPath := filepath.Join("..", "..", "testdata", "jar-small", "capture.json")
	dir := t.TempDir()
	first := filepath.Join(dir, "first.json")
	var stdout, stderr bytes.Buffer
	if code := run(context.Background(), []string{"fit", capPath, "-o", first, "-progress", "never", "-threads", "2"}, &stdout, &stderr); code != 0 {
		t.Fatalf("exit %d: %s", code, stderr.String())
	}
	mf, err := materials.Load(first)
	if err != nil {
		t.Fatal(err)
	}
	g := mf.Segment("glaze")
	if g == nil || len(g.LossHistory) == 0 {
		t.Fatalf("glaze segment %+v: no loss history", g)
	}
	g.Roughness = 0.61
	g.Locked = []string{"roughness"}
	if err := mf.Save(first); err != nil {
		t.Fatal(err)
	}
	second := filepath.Join(dir, "second.json")
	stdout.Reset()
	if code := run(context.Background(), []string{"fit", capPath, "-locks", first, "-o", second, "-progress", "never", "-threads", "2"}, &stdout, &stderr); code != 0 {
		t.Fatalf("-locks: exit %d: %s", code, stderr.String())
	}
	if !strings.Contains(stdout.String(), "held: glaze: roughness") {
		t.Errorf("table does not say what was held:\n%s", stdout.String())
	}
	mf2, err := materials.Load(second)
	if err != nil {
		t.Fatal(err)
	}
	g2 := mf2.Segment("glaze")
	if g2.Roughness != 0.61 || g2.Sigma == nil || g2.Sigma.Roughness != 0 || len(g2.Locked) != 1 || g2.Locked[0] != "roughness" {
		t.Errorf("held roughness: %v ± %+v, locked %v", g2.Roughness, g2.Sigma, g2.Locked)
	}
	if g2.Diffuse == g.Diffuse {
		t.Errorf("diffuse %v not refitted with the roughness held", g2.Diffuse)
	}

	// The fixture's gilding is a metal: holding its diffuse is refused.
	gi := mf.Segment("gilding")
	if gi == nil || gi.Model != "metal" {
		t.Skipf("fixture's gilding is %+v, not a metal", gi)
	}
	raw, err := os.ReadFile(first)
	if err != nil {
		t.Fatal(err)
	}
	var doc map[string]any
	if err := json.Unmarshal(raw, &doc); err != nil {
		t.Fatal(err)
	}
	for i, s := range doc["segments"].([]any) {
		if s.(map[string]any)["name"] == "gilding" {
			s.(map[string]any)["locked"] = []string{"diffuse"}
			bad := filepath.Join(dir, "bad.json")
			b, _ := json.Marshal(doc)
			if err := os.WriteFile(bad, b, 0o644); err != nil {
				t.Fatal(err)
			}
			stderr.Reset()
			if code := run(context.Background(), []string{"fit", capPath, "-locks", bad, "-progress", "never"}, &stdout, &stderr); code != 2 ||
				!strings.Contains(stderr.String(), "bad.json") || !strings.Contains(stderr.String(), fmt.Sprintf("segments[%d].locked[0]", i)) {
				t.Errorf("metal diffuse lock: exit %d: %s", code, stderr.String())
			}
		}
	}
}
