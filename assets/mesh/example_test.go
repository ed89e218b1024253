package mesh_test

import (
	"fmt"
	"strings"

	"patina/assets/mesh"
)

// An OBJ quadrilateral with a material becomes two triangles in one named
// segment.
func ExampleReadOBJ() {
	src := "v 0 0 0\nv 2 0 0\nv 2 1 0\nv 0 1 0\nusemtl glaze\nf 1 2 3 4\n"
	m, rep, err := mesh.ReadOBJ(strings.NewReader(src), "quad.obj")
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(rep.Triangles, "triangles,", rep.Vertices, "vertices, area", mesh.SurfaceArea(m))
	fmt.Printf("segment %q, computed normals %v\n", m.SegmentLabels[0].Name, rep.ComputedNormals)
	// Output:
	// 2 triangles, 4 vertices, area 2
	// segment "glaze", computed normals true
}

// Errors name the file, the line and the element record.
func ExampleReadPLY_error() {
	src := "ply\nformat ascii 1.0\nelement vertex 3\nproperty float x\nproperty float y\nproperty float z\n" +
		"element face 1\nproperty list uchar int vertex_indices\nend_header\n0 0 0\n1 0 0\n0 1 0\n3 0 1 7\n"
	_, _, err := mesh.ReadPLY(strings.NewReader(src), "tri.ply")
	fmt.Println(err)
	// Output:
	// tri.ply: line 13 (face 0): index 7 out of range (vertex count 3)
}
