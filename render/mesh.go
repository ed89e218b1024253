package render

// Mesh is an indexed triangle mesh in world units (metres), the form every
// mesh reader of Patina produces and every consumer (the BVH, the fit, the
// glTF writer) takes. Storage is flat and float32 so that a scan of a few
// million triangles stays compact.
//
// Invariants (NewScene refuses a mesh that breaks them, with a *MeshError):
//   - len(Positions) == 3*NumVertices; Normals is empty or the same length;
//     UVs is empty or 2*NumVertices long.
//   - len(Indices) == 3*NumTriangles, every index < NumVertices.
//   - len(Segments) == NumTriangles; Segments[t] indexes SegmentLabels.
type Mesh struct {
	// Positions holds x, y, z per vertex.
	Positions []float32
	// Normals holds unit nx, ny, nz per vertex, or is empty.
	Normals []float32
	// UVs holds u, v per vertex, or is empty.
	UVs []float32
	// Indices holds three vertex indices per triangle, counter-clockwise
	// seen from the side the normal points to.
	Indices []uint32
	// Segments holds, per triangle, an index into SegmentLabels.
	Segments []int32
	// SegmentLabels describes each segment as the file named it: the PLY
	// integer face property "segment" (Label set, Name empty unless known)
	// or the OBJ usemtl / g name (Name set, Label = -1).
	SegmentLabels []SegmentLabel
}

// SegmentLabel is how a mesh file names one group of faces.
type SegmentLabel struct {
	Label int    // PLY face property "segment"; -1 when the file names segments by string
	Name  string // OBJ usemtl (or g) name; empty for PLY
}

// NumVertices is the number of vertices.
func (m *Mesh) NumVertices() int { return len(m.Positions) / 3 }

// NumTriangles is the number of triangles.
func (m *Mesh) NumTriangles() int { return len(m.Indices) / 3 }

// Vertex returns the position of vertex i.
func (m *Mesh) Vertex(i uint32) (x, y, z float32) {
	p := m.Positions[3*i : 3*i+3 : 3*i+3]
	return p[0], p[1], p[2]
}
