package mesh

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"testing/iotest"

	"patina/render"
)

// seedFiles adds every fixture and bad file with one of the extensions.
func seedFiles(f *testing.F, exts ...string) {
	for _, dir := range []string{fixtures, badDir} {
		entries, err := os.ReadDir(dir)
		if err != nil {
			f.Fatal(err)
		}
		for _, e := range entries {
			for _, ext := range exts {
				if strings.HasSuffix(e.Name(), ext) {
					data, err := os.ReadFile(filepath.Join(dir, e.Name()))
					if err != nil {
						f.Fatal(err)
					}
					f.Add(data)
				}
			}
		}
	}
}

// fuzzCheck asserts what must hold for any mesh a reader returns, and that
// Patina's own writer and reader agree on it.
func fuzzCheck(t *testing.T, m *render.Mesh, rep *Report) {
	checkMesh(t, m)
	if rep.Triangles != m.NumTriangles() || rep.Vertices != m.NumVertices() {
		t.Fatalf("report %+v disagrees with the mesh", rep)
	}
	var buf bytes.Buffer
	if err := WritePLY(&buf, m, "binary_little_endian"); err != nil {
		t.Fatalf("WritePLY: %v", err)
	}
	back, _, err := ReadPLY(&buf, "back.ply")
	if err != nil {
		t.Fatalf("reading back what WritePLY wrote: %v", err)
	}
	if back.NumVertices() != m.NumVertices() || back.NumTriangles() > m.NumTriangles() {
		t.Fatalf("round trip: %d/%d vertices, %d/%d triangles", back.NumVertices(), m.NumVertices(), back.NumTriangles(), m.NumTriangles())
	}
}

func FuzzReadPLY(f *testing.F) {
	seedFiles(f, ".ply")
	for _, format := range []string{"ascii", "binary_little_endian", "binary_big_endian"} {
		f.Add(tetraPLY(format, "float", "uchar", "int", "double", true))
		f.Add(tetraPLY(format, "short", "ushort", "uint8", "char", false))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		m, rep, err := ReadPLY(bytes.NewReader(data), "fuzz.ply")
		// The same bytes trickled one at a time through a reader of
		// unknown length take the record-by-record path and no size check:
		// the outcome must be the same.
		m2, _, err2 := ReadPLY(iotest.OneByteReader(bytes.NewReader(data)), "fuzz.ply")
		if (err == nil) != (err2 == nil) {
			t.Fatalf("in memory: %v; trickled: %v", err, err2)
		}
		if err != nil {
			return
		}
		if fmt.Sprint(m) != fmt.Sprint(m2) {
			t.Fatalf("trickled read differs")
		}
		fuzzCheck(t, m, rep)
	})
}

func FuzzReadOBJ(f *testing.F) {
	seedFiles(f, ".obj")
	f.Add([]byte("v 0 0 0\nv 1 0 0\nv 1 1 0\nv 0 1 0\nvt 0 0\nvn 0 0 1\nf 1/1/1 2/1/1 3/1/1 4/1/1\nf -1 -2 -3\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		m, rep, err := ReadOBJ(bytes.NewReader(data), "fuzz.obj")
		if err != nil {
			return
		}
		fuzzCheck(t, m, rep)
	})
}
