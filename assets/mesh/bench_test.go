package mesh

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"testing"

	"patina/render"
)

// gridMesh is a wavy height field of (nx-1)*(ny-1)*2 triangles.
func gridMesh(nx, ny int) *render.Mesh {
	m := &render.Mesh{}
	for j := 0; j < ny; j++ {
		for i := 0; i < nx; i++ {
			x, y := float64(i)/float64(nx-1), float64(j)/float64(ny-1)
			m.Positions = append(m.Positions, float32(x), float32(y), float32(0.05*math.Sin(7*x)*math.Cos(5*y)))
		}
	}
	for j := 0; j+1 < ny; j++ {
		for i := 0; i+1 < nx; i++ {
			a := uint32(j*nx + i)
			m.Indices = append(m.Indices, a, a+1, a+1+uint32(nx), a, a+1+uint32(nx), a+uint32(nx))
			m.Segments = append(m.Segments, int32(j%4/2), int32(j%4/2))
		}
	}
	m.SegmentLabels = []render.SegmentLabel{{Label: 0}, {Label: 1}}
	return m
}

func objText(m *render.Mesh) []byte {
	var b []byte
	b = append(b, "# grid\n"...)
	for i := 0; i < m.NumVertices(); i++ {
		b = append(b, 'v')
		for k := 0; k < 3; k++ {
			b = append(b, ' ')
			b = strconv.AppendFloat(b, float64(m.Positions[3*i+k]), 'g', -1, 32)
		}
		b = append(b, '\n')
	}
	for t := 0; t < m.NumTriangles(); t++ {
		if t == 0 || m.Segments[t] != m.Segments[t-1] {
			b = append(b, "usemtl m"...)
			b = strconv.AppendInt(b, int64(m.Segments[t]), 10)
			b = append(b, '\n')
		}
		b = append(b, 'f')
		for k := 0; k < 3; k++ {
			b = append(b, ' ')
			b = strconv.AppendUint(b, uint64(m.Indices[3*t+k]+1), 10)
		}
		b = append(b, '\n')
	}
	return b
}

// A million triangles: a 501 x 1001 vertex grid.
const benchNX, benchNY = 501, 1001

func benchLoad(b *testing.B, name string, data func(m *render.Mesh) []byte) {
	m := gridMesh(benchNX, benchNY)
	path := filepath.Join(b.TempDir(), name)
	buf := data(m)
	if err := os.WriteFile(path, buf, 0o644); err != nil {
		b.Fatal(err)
	}
	b.SetBytes(int64(len(buf)))
	b.ReportAllocs()
	b.ResetTimer()
	cpu0 := processCPU()
	for i := 0; i < b.N; i++ {
		got, _, err := Load(path)
		if err != nil {
			b.Fatal(err)
		}
		if got.NumTriangles() != 1_000_000 {
			b.Fatalf("%d triangles", got.NumTriangles())
		}
	}
	// CPU seconds per load (all threads, GC included): the figure that
	// holds when other work shares the machine.
	b.ReportMetric((processCPU()-cpu0).Seconds()/float64(b.N), "cpu-s/op")
}

// Goal: under 0.5 s per load on the 2-core machine.
func BenchmarkLoadBinaryPLY1M(b *testing.B) {
	benchLoad(b, "grid.ply", func(m *render.Mesh) []byte {
		var w bytes.Buffer
		if err := WritePLY(&w, m, "binary_little_endian"); err != nil {
			b.Fatal(err)
		}
		return w.Bytes()
	})
}

// Goal: under 2 s per load.
func BenchmarkLoadOBJ1M(b *testing.B) { benchLoad(b, "grid.obj", objText) }

func BenchmarkLoadASCIIPLY1M(b *testing.B) {
	benchLoad(b, "grid-ascii.ply", func(m *render.Mesh) []byte {
		var w bytes.Buffer
		if err := WritePLY(&w, m, "ascii"); err != nil {
			b.Fatal(err)
		}
		return w.Bytes()
	})
}

// Parsing allocates for the output, not per line: ten times the lines must
// not cost ten times the allocations (appends grow geometrically, so the
// count grows by a few only).
func TestAllocationsDoNotScaleWithLines(t *testing.T) {
	small, large := gridMesh(21, 21), gridMesh(201, 21) // 800 and 8000 triangles
	for _, c := range []struct {
		name string
		read func([]byte) error
		data func(*render.Mesh) []byte
	}{
		{"obj", func(d []byte) error { _, _, err := ReadOBJ(bytes.NewReader(d), "a.obj"); return err }, objText},
		{"ply ascii", func(d []byte) error { _, _, err := ReadPLY(bytes.NewReader(d), "a.ply"); return err }, func(m *render.Mesh) []byte {
			var w bytes.Buffer
			WritePLY(&w, m, "ascii")
			return w.Bytes()
		}},
		{"ply binary", func(d []byte) error { _, _, err := ReadPLY(bytes.NewReader(d), "a.ply"); return err }, func(m *render.Mesh) []byte {
			var w bytes.Buffer
			WritePLY(&w, m, "binary_big_endian")
			return w.Bytes()
		}},
	} {
		ds, dl := c.data(small), c.data(large)
		as := testing.AllocsPerRun(3, func() {
			if err := c.read(ds); err != nil {
				t.Fatal(err)
			}
		})
		al := testing.AllocsPerRun(3, func() {
			if err := c.read(dl); err != nil {
				t.Fatal(err)
			}
		})
		t.Logf("%s: %v allocations for %d bytes, %v for %d bytes", c.name, as, len(ds), al, len(dl))
		if al > as+40 {
			t.Errorf("%s: %v allocations for 10x the lines vs %v: parsing allocates per line", c.name, al, as)
		}
	}
}
