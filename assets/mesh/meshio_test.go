package mesh

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"sort"
	"testing"

	"patina/render"
	"patina/render/refcheck"
)

// meshioWrite builds a test surface with numpy (a random height field of
// triangles and a flat grid of planar quadrilaterals) and writes it with
// meshio (Debian python3-meshio) as PLY ascii, PLY binary little endian, PLY
// binary big endian and OBJ. meshio's PLY writer always uses the machine's
// byte order; for big endian the script hands it byte-swapped arrays with
// sys.byteorder set to "big", so meshio's own writer lays out a big-endian
// file, and then checks with meshio's reader that the file holds the data.
// The surface area is computed by numpy on the float32-rounded points:
// 0.5 |(b-a) x (c-a)| per triangle, and half the length of the Newell vector
// per (planar) quadrilateral.
const meshioWrite = `
import sys, json, os
import numpy as np
import meshio
out = sys.argv[1]
rng = np.random.default_rng(20261201)
n = 24
xs, ys = np.meshgrid(np.linspace(0, 1, n), np.linspace(0, 1.5, n))
zs = 0.1 * rng.standard_normal((n, n))
pts = np.column_stack([xs.ravel(), ys.ravel(), zs.ravel()])
tris = []
for i in range(n - 1):
    for j in range(n - 1):
        a = i * n + j
        tris += [[a, a + 1, a + 1 + n], [a, a + 1 + n, a + n]]
m = 8
qx, qy = np.meshgrid(np.linspace(0, 1, m), np.linspace(0, 1.5, m))
qpts = np.column_stack([qx.ravel(), qy.ravel(), np.full(m * m, -1.0)])
base = len(pts)
quads = []
for i in range(m - 1):
    for j in range(m - 1):
        a = base + i * m + j
        quads.append([a, a + 1, a + 1 + m, a + m])
points = np.vstack([pts, qpts])
tris = np.array(tris, dtype=np.int32)
quads = np.array(quads, dtype=np.int32)
mesh = meshio.Mesh(points, [("triangle", tris), ("quad", quads)])
meshio.write(os.path.join(out, "meshio-ascii.ply"), mesh, file_format="ply", binary=False)
meshio.write(os.path.join(out, "meshio-le.ply"), mesh, file_format="ply", binary=True)
meshio.write(os.path.join(out, "meshio.obj"), mesh, file_format="obj")
swapped = meshio.Mesh(points.byteswap(), [("triangle", tris.byteswap()), ("quad", quads.byteswap())])
saved = sys.byteorder
sys.byteorder = "big"
try:
    meshio.write(os.path.join(out, "meshio-be.ply"), swapped, file_format="ply", binary=True)
finally:
    sys.byteorder = saved
back = meshio.read(os.path.join(out, "meshio-be.ply"))
assert open(os.path.join(out, "meshio-be.ply"), "rb").read().find(b"format binary_big_endian 1.0") > 0
assert np.array_equal(back.points, points)
assert np.array_equal(back.cells[0].data, tris) and np.array_equal(back.cells[1].data, quads)
p = points.astype(np.float32).astype(np.float64)
t = p[tris]
area = 0.5 * np.linalg.norm(np.cross(t[:, 1] - t[:, 0], t[:, 2] - t[:, 0]), axis=1).sum()
q = p[quads]
newell = np.zeros((len(quads), 3))
for k in range(4):
    a, b = q[:, k], q[:, (k + 1) % 4]
    newell += np.cross(a, b)
area += 0.5 * np.linalg.norm(newell, axis=1).sum()
json.dump({"points": points.tolist(), "tris": tris.tolist(), "quads": quads.tolist(), "area": float(area)}, sys.stdout)
`

// meshioRead reads the files named on the command line with meshio and
// prints their points, triangles and numpy's surface area.
const meshioRead = `
import sys, json
import numpy as np
import meshio
res = []
for f in sys.argv[1:]:
    m = meshio.read(f)
    tris = np.vstack([c.data for c in m.cells if c.type == "triangle"])
    p = m.points.astype(np.float64)
    t = p[tris]
    area = 0.5 * np.linalg.norm(np.cross(t[:, 1] - t[:, 0], t[:, 2] - t[:, 0]), axis=1).sum()
    res.append({"points": p.tolist(), "tris": tris.tolist(), "area": float(area)})
json.dump(res, sys.stdout)
`

type meshioMesh struct {
	Points [][3]float64
	Tris   [][3]int
	Quads  [][4]int
	Area   float64
}

func TestMeshioFiles(t *testing.T) {
	refcheck.RequirePython(t, map[string]string{"meshio": "python3-meshio", "numpy": "python3-numpy"})
	dir := t.TempDir()
	var ref meshioMesh
	if err := json.Unmarshal(refcheck.RunPython(t, meshioWrite, dir), &ref); err != nil {
		t.Fatal(err)
	}
	files := map[string]string{
		"meshio-ascii.ply": "ply ascii",
		"meshio-le.ply":    "ply binary_little_endian",
		"meshio-be.ply":    "ply binary_big_endian",
		"meshio.obj":       "obj",
	}
	var loaded *render.Mesh
	for f, format := range files {
		t.Run(f, func(t *testing.T) {
			m, rep, err := Load(filepath.Join(dir, f))
			if err != nil {
				t.Fatal(err)
			}
			checkMesh(t, m)
			if rep.Format != format || rep.Degenerate != 0 {
				t.Errorf("report %+v, want format %s", rep, format)
			}
			if m.NumVertices() != len(ref.Points) {
				t.Fatalf("%d vertices, meshio wrote %d", m.NumVertices(), len(ref.Points))
			}
			for i, p := range ref.Points {
				for k := 0; k < 3; k++ {
					// PLY holds meshio's float64 exactly (rounded once to
					// float32 here); OBJ holds its shortest decimal form.
					if got, want := float64(m.Positions[3*i+k]), float64(float32(p[k])); math.Abs(got-want) > 1.2e-7*math.Max(1, math.Abs(want)) {
						t.Fatalf("vertex %d = %v, meshio %v", i, m.Positions[3*i:3*i+3], p)
					}
				}
			}
			if m.NumTriangles() != len(ref.Tris)+2*len(ref.Quads) {
				t.Fatalf("%d triangles, want %d + 2*%d", m.NumTriangles(), len(ref.Tris), len(ref.Quads))
			}
			for i, tri := range ref.Tris {
				for k := 0; k < 3; k++ {
					if int(m.Indices[3*i+k]) != tri[k] {
						t.Fatalf("triangle %d = %v, meshio %v", i, m.Indices[3*i:3*i+3], tri)
					}
				}
			}
			// Each quadrilateral becomes two triangles over its four corners.
			at := 3 * len(ref.Tris)
			for i, q := range ref.Quads {
				var got []int
				for _, v := range m.Indices[at+6*i : at+6*i+6] {
					got = append(got, int(v))
				}
				sort.Ints(got)
				want := []int{q[0], q[0], q[1], q[2], q[2], q[3]} // split along one diagonal
				alt := []int{q[0], q[1], q[1], q[2], q[3], q[3]}
				sort.Ints(want)
				sort.Ints(alt)
				if !equalInts(got, want) && !equalInts(got, alt) {
					t.Fatalf("quad %d %v split into %v", i, q, m.Indices[at+6*i:at+6*i+6])
				}
			}
			if a := SurfaceArea(m); math.Abs(a-ref.Area) > 1e-9*ref.Area {
				t.Errorf("area %.12g, numpy on meshio's points %.12g", a, ref.Area)
			}
			if f == "meshio-le.ply" {
				loaded = m
			}
		})
	}
	if loaded == nil {
		t.Fatal("no mesh to write back")
	}
	// The other direction: meshio reads what Patina writes, in every
	// encoding. meshio 5.0's binary reader mishandles scalar face properties
	// (it keeps one value for the whole element), so the binary files are
	// written without the segment property; the ascii one has it.
	var paths []string
	for _, format := range []string{"ascii", "binary_little_endian", "binary_big_endian"} {
		p := filepath.Join(dir, "patina-"+format+".ply")
		f, err := os.Create(p)
		if err != nil {
			t.Fatal(err)
		}
		if err := writePLY(f, loaded, format, format == "ascii"); err != nil {
			t.Fatal(err)
		}
		f.Close()
		paths = append(paths, p)
	}
	var back []meshioMesh
	if err := json.Unmarshal(refcheck.RunPython(t, meshioRead, paths...), &back); err != nil {
		t.Fatal(err)
	}
	for i, b := range back {
		if len(b.Points) != loaded.NumVertices() || len(b.Tris) != loaded.NumTriangles() {
			t.Fatalf("%s: meshio read %d points %d triangles", paths[i], len(b.Points), len(b.Tris))
		}
		for v, p := range b.Points {
			for k := 0; k < 3; k++ {
				if float32(p[k]) != loaded.Positions[3*v+k] {
					t.Fatalf("%s: vertex %d meshio %v, Patina %v", paths[i], v, p, loaded.Positions[3*v:3*v+3])
				}
			}
		}
		for tr, tri := range b.Tris {
			for k := 0; k < 3; k++ {
				if uint32(tri[k]) != loaded.Indices[3*tr+k] {
					t.Fatalf("%s: triangle %d meshio %v", paths[i], tr, tri)
				}
			}
		}
		if a := SurfaceArea(loaded); math.Abs(a-b.Area) > 1e-9*a {
			t.Errorf("%s: numpy area %.12g, Patina %.12g", paths[i], b.Area, a)
		}
	}
}

func equalInts(a, b []int) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}
