package main

import (
	"bytes"
	"context"
	"encoding/json"
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
	if len(mf.Segments) != 3 || mf.Fit == nil || mf.Fit.Optimizer != "lbfgs" {
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
