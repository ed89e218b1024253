package main

import (
	"bytes"
	"encoding/binary"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// writeCubePLY writes the cube [-1,1]^3 as binary little-endian PLY in the
// layout of the Embree harness (vertex float x y z, face list uchar int).
func writeCubePLY(t *testing.T, dir string) string {
	t.Helper()
	var b bytes.Buffer
	b.WriteString("ply\nformat binary_little_endian 1.0\nelement vertex 8\nproperty float x\nproperty float y\nproperty float z\nelement face 12\nproperty list uchar int vertex_indices\nend_header\n")
	for i := 0; i < 8; i++ {
		for _, v := range []float32{float32(2*(i&1) - 1), float32(2*(i>>1&1) - 1), float32(2*(i>>2&1) - 1)} {
			binary.Write(&b, binary.LittleEndian, v)
		}
	}
	quads := [][4]int32{{0, 2, 3, 1}, {4, 5, 7, 6}, {0, 1, 5, 4}, {2, 6, 7, 3}, {0, 4, 6, 2}, {1, 3, 7, 5}}
	for _, q := range quads {
		for _, tri := range [][3]int32{{q[0], q[1], q[2]}, {q[0], q[2], q[3]}} {
			b.WriteByte(3)
			binary.Write(&b, binary.LittleEndian, tri)
		}
	}
	p := filepath.Join(dir, "cube.ply")
	if err := os.WriteFile(p, b.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func writeRays(t *testing.T, dir, name string, recs [][7]float32) string {
	t.Helper()
	var b bytes.Buffer
	for _, r := range recs {
		binary.Write(&b, binary.LittleEndian, r)
	}
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, b.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestTraceCube(t *testing.T) {
	dir := t.TempDir()
	mesh := writeCubePLY(t, dir)
	inf := float32(math.Inf(1))
	// Distances are known in closed form: from z = 5 straight down the cube's
	// top face is 4 away; from the centre every face is 1 away.
	rays := writeRays(t, dir, "r.bin", [][7]float32{
		{0.3, -0.2, 5, 0, 0, -1, inf},  // hits the top at t = 4
		{0, 0, 0, 1, 0, 0, inf},        // from the centre: t = 1
		{0, 0, 0, 0, 0.6, 0.8, inf},    // from the centre to the face y = 1 at t = 1.25
		{3, 3, 3, 1, 0, 0, inf},        // misses
		{0.5, 0.5, 5, 0, 0, -1, 3.5},   // tmax short of the cube: miss
		{1, 1, 5, 0, 0, -1, inf},       // exactly down the edge x = y = 1: hits at t = 4
		{0.1, 0.2, -7, 0, 0, 1, inf},   // bottom face from below at t = 6
		{-5, 0.25, 0.5, 1, 0, 0, 10.0}, // the face x = -1 at t = 4
	})
	code, out, errOut := runCLI(t, "trace", "-mesh", mesh, "-rays", rays, "-json", "-passes", "2", "-builds", "1")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	var res map[string]float64
	if err := json.Unmarshal([]byte(out), &res); err != nil {
		t.Fatalf("%v: %q", err, out)
	}
	if len(res) != 6 {
		t.Fatalf("keys %v", res)
	}
	want := 4 + 1 + 1.25 + 4 + 6 + 4.0
	if res["rays"] != 8 || res["hits"] != 6 || math.Abs(res["sum_t"]-want) > 1e-6 || !(res["build_s"] > 0) || !(res["seconds"] > 0) || !(res["mrays_per_s"] > 0) {
		t.Fatalf("result %v, want 8 rays, 6 hits, sum_t %v", res, want)
	}
	// Any-hit mode counts the same hits.
	code, out, _ = runCLI(t, "trace", "-mesh", mesh, "-rays", rays, "-occluded", "-threads", "2", "-json", "-passes", "1", "-builds", "1")
	if code != 0 || !strings.Contains(out, `"hits":6`) || !strings.Contains(out, `"sum_t":0`) {
		t.Fatalf("occluded: exit %d %q", code, out)
	}
	// Text output names the figures.
	code, out, _ = runCLI(t, "trace", "-rays", rays, "-passes", "1", "-builds", "1", "-mesh", mesh)
	for _, k := range []string{"rays", "hits", "sum_t", "build_s", "seconds", "mrays_per_s"} {
		if code != 0 || !strings.Contains(out, k+" ") {
			t.Fatalf("text output lacks %s: %q", k, out)
		}
	}
}

func TestTraceBadInput(t *testing.T) {
	dir := t.TempDir()
	mesh := writeCubePLY(t, dir)
	good := [7]float32{0, 0, 5, 0, 0, -1, 10}
	nan := float32(math.NaN())
	trunc := filepath.Join(dir, "trunc.bin")
	os.WriteFile(trunc, make([]byte, 28*2+5), 0o644)
	for _, tc := range []struct {
		name string
		args []string
		msg  string
	}{
		{"truncated", []string{"-rays", trunc}, "trunc.bin: record 2 (byte 56): truncated"},
		{"not unit", []string{"-rays", writeRays(t, dir, "nu.bin", [][7]float32{good, {0, 0, 0, 0, 0, 2, 1}})}, "nu.bin: record 1 (byte 28): direction"},
		{"nan origin", []string{"-rays", writeRays(t, dir, "nan.bin", [][7]float32{good, good, {nan, 0, 0, 1, 0, 0, 1}})}, "nan.bin: record 2 (byte 56): value 1 of 7"},
		{"negative tmax", []string{"-rays", writeRays(t, dir, "neg.bin", [][7]float32{{0, 0, 0, 1, 0, 0, -1}})}, "neg.bin: record 0 (byte 0): tmax"},
		{"missing rays", []string{"-rays", filepath.Join(dir, "none.bin")}, "none.bin"},
		{"no flags", []string{}, "-mesh and -rays are required"},
		{"extra argument", []string{"-rays", trunc, "extra"}, `unexpected argument "extra"`},
		{"bad threads", []string{"-rays", trunc, "-threads", "0"}, "at least 1"},
	} {
		args := append([]string{"trace"}, tc.args...)
		if tc.name != "no flags" {
			args = append(args, "-mesh", mesh)
		}
		code, _, errOut := runCLI(t, args...)
		if code != 2 || !strings.Contains(errOut, tc.msg) {
			t.Errorf("%s: exit %d, stderr %q (want %q)", tc.name, code, errOut, tc.msg)
		}
	}
	code, _, errOut := runCLI(t, "trace", "-mesh", filepath.Join(dir, "none.ply"), "-rays", trunc)
	if code != 2 || !strings.Contains(errOut, "none.ply") {
		t.Errorf("missing mesh: exit %d %q", code, errOut)
	}
}
