// Package gltf writes binary glTF 2.0 (.glb) files from a Patina mesh and its
// fitted materials. The glTF 2.0 specification (Khronos) is at
// https://registry.khronos.org/glTF/specs/2.0/glTF-2.0.html; the extensions
// used are KHR_materials_specular and KHR_materials_ior.
//
// The writer is Patina's own, on encoding/json and encoding/binary. Each
// segment becomes one primitive of one mesh with its own compact vertex set
// (positions, normals, UVs where the mesh has them, uint32 indices) and one
// material. Axes are converted from the capture's up axis to glTF's +Y up
// (right-handed, metres).
package gltf

import (
	"bytes"
	"encoding/binary"
	"encoding/json"
	"fmt"
	"io"
	"math"

	"patina/render"
)

// Material is one segment's material in glTF terms, made by Map.
type Material struct {
	Name            string
	BaseColor       [3]float64 // linear
	Metallic        float64
	Roughness       float64
	IOR             float64    // KHR_materials_ior; 0 = not written
	SpecularColor   [3]float64 // KHR_materials_specular specularColorFactor
	SpecularFactor  float64    // KHR_materials_specular specularFactor
	UseSpecularExts bool       // write the two extensions
	Extras          map[string]any
}

// Options describe the file as a whole.
type Options struct {
	// Up is the source's up axis ("+x" ... "-z"); it is turned into +Y.
	Up string
	// NodeName names the node (the capture's name).
	NodeName string
	// Generator fills asset.generator (Patina and its version).
	Generator string
	// Extras fills asset.extras (provenance).
	Extras map[string]any
}

// Limits of what the writer accepts, checked before allocating.
const (
	MaxTriangles = 1 << 26
	maxBinBytes  = 1<<32 - 64
)

// UpRotation returns the rotation (rows) that turns the given up axis into
// +Y while keeping the frame right-handed.
func UpRotation(up string) ([3][3]float64, error) {
	switch up {
	case "", "+z":
		return [3][3]float64{{1, 0, 0}, {0, 0, 1}, {0, -1, 0}}, nil // (x, y, z) -> (x, z, -y)
	case "-z":
		return [3][3]float64{{1, 0, 0}, {0, 0, -1}, {0, 1, 0}}, nil // (x, y, z) -> (x, -z, y)
	case "+y":
		return [3][3]float64{{1, 0, 0}, {0, 1, 0}, {0, 0, 1}}, nil
	case "-y":
		return [3][3]float64{{1, 0, 0}, {0, -1, 0}, {0, 0, -1}}, nil // half turn about x
	case "+x":
		return [3][3]float64{{0, -1, 0}, {1, 0, 0}, {0, 0, 1}}, nil // quarter turn about z
	case "-x":
		return [3][3]float64{{0, 1, 0}, {-1, 0, 0}, {0, 0, 1}}, nil
	}
	return [3][3]float64{}, fmt.Errorf("up axis %q is not one of +x -x +y -y +z -z", up)
}

// Summary says what was written.
type Summary struct {
	Primitives int
	Triangles  int
	Vertices   int
	Bytes      int
	Min, Max   [3]float64 // bounds after the axis change
}

type jsonDoc struct {
	Asset          map[string]any   `json:"asset"`
	ExtensionsUsed []string         `json:"extensionsUsed,omitempty"`
	Scene          int              `json:"scene"`
	Scenes         []map[string]any `json:"scenes"`
	Nodes          []map[string]any `json:"nodes"`
	Meshes         []map[string]any `json:"meshes"`
	Materials      []map[string]any `json:"materials"`
	Accessors      []map[string]any `json:"accessors"`
	BufferViews    []map[string]any `json:"bufferViews"`
	Buffers        []map[string]any `json:"buffers"`
}

const (
	arrayBuffer        = 34962
	elementArrayBuffer = 34963
	componentFloat     = 5126
	componentUint32    = 5125
	modeTriangles      = 4
)

// WriteGLB writes m as a .glb with one primitive per segment: triangle t
// belongs to primitive triSegment[t] (an index into mats; -1 leaves the
// triangle out). Segments without triangles are left out.
func WriteGLB(w io.Writer, m *render.Mesh, triSegment []int32, mats []Material, opt Options) (*Summary, error) {
	if m.NumTriangles() > MaxTriangles {
		return nil, fmt.Errorf("gltf: %d triangles exceed the limit of %d", m.NumTriangles(), MaxTriangles)
	}
	if len(triSegment) != m.NumTriangles() {
		return nil, fmt.Errorf("gltf: %d segment entries for %d triangles", len(triSegment), m.NumTriangles())
	}
	rot, err := UpRotation(opt.Up)
	if err != nil {
		return nil, fmt.Errorf("gltf: %w", err)
	}
	hasN := len(m.Normals) == len(m.Positions)
	hasUV := len(m.UVs) == 2*m.NumVertices() && len(m.UVs) > 0

	// Group triangles by segment, keeping mesh order inside each group.
	groups := make([][]int, len(mats))
	for t, s := range triSegment {
		if s < 0 {
			continue
		}
		if int(s) >= len(mats) {
			return nil, fmt.Errorf("gltf: triangle %d has segment %d, only %d materials", t, s, len(mats))
		}
		groups[s] = append(groups[s], t)
	}

	var bin bytes.Buffer
	doc := jsonDoc{
		Asset: map[string]any{"version": "2.0", "generator": opt.Generator},
		Scene: 0,
	}
	if len(opt.Extras) > 0 {
		doc.Asset["extras"] = opt.Extras
	}
	sum := &Summary{Min: [3]float64{math.Inf(1), math.Inf(1), math.Inf(1)}, Max: [3]float64{math.Inf(-1), math.Inf(-1), math.Inf(-1)}}
	var prims []map[string]any
	usedExt := false
	matIndex := map[int]int{}
	addView := func(data []byte, target int) int {
		for bin.Len()%4 != 0 {
			bin.WriteByte(0)
		}
		off := bin.Len()
		bin.Write(data)
		doc.BufferViews = append(doc.BufferViews, map[string]any{
			"buffer": 0, "byteOffset": off, "byteLength": len(data), "target": target,
		})
		return len(doc.BufferViews) - 1
	}
	addAccessor := func(view, count int, comp int, typ string, min, max []float64) int {
		a := map[string]any{"bufferView": view, "componentType": comp, "count": count, "type": typ}
		if min != nil {
			a["min"], a["max"] = min, max
		}
		doc.Accessors = append(doc.Accessors, a)
		return len(doc.Accessors) - 1
	}
	for s, tris := range groups {
		if len(tris) == 0 {
			continue
		}
		// Compact vertex set of this segment.
		remap := map[uint32]uint32{}
		var order []uint32
		idx := make([]uint32, 0, 3*len(tris))
		for _, t := range tris {
			for k := 0; k < 3; k++ {
				v := m.Indices[3*t+k]
				n, ok := remap[v]
				if !ok {
					n = uint32(len(order))
					remap[v] = n
					order = append(order, v)
				}
				idx = append(idx, n)
			}
		}
		pos := make([]byte, 12*len(order))
		var nrm, uv []byte
		if hasN {
			nrm = make([]byte, 12*len(order))
		}
		if hasUV {
			uv = make([]byte, 8*len(order))
		}
		pmin := []float64{math.Inf(1), math.Inf(1), math.Inf(1)}
		pmax := []float64{math.Inf(-1), math.Inf(-1), math.Inf(-1)}
		for i, v := range order {
			p := rotate(rot, m.Positions[3*v:3*v+3])
			for c := 0; c < 3; c++ {
				f := float32(p[c])
				binary.LittleEndian.PutUint32(pos[12*i+4*c:], math.Float32bits(f))
				pmin[c] = math.Min(pmin[c], float64(f))
				pmax[c] = math.Max(pmax[c], float64(f))
			}
			if hasN {
				n := rotate(rot, m.Normals[3*v:3*v+3])
				l := math.Sqrt(n[0]*n[0] + n[1]*n[1] + n[2]*n[2])
				if l == 0 {
					n, l = [3]float64{0, 1, 0}, 1
				}
				for c := 0; c < 3; c++ {
					binary.LittleEndian.PutUint32(nrm[12*i+4*c:], math.Float32bits(float32(n[c]/l)))
				}
			}
			if hasUV {
				binary.LittleEndian.PutUint32(uv[8*i:], math.Float32bits(m.UVs[2*v]))
				binary.LittleEndian.PutUint32(uv[8*i+4:], math.Float32bits(m.UVs[2*v+1]))
			}
		}
		for c := 0; c < 3; c++ {
			sum.Min[c] = math.Min(sum.Min[c], pmin[c])
			sum.Max[c] = math.Max(sum.Max[c], pmax[c])
		}
		ib := make([]byte, 4*len(idx))
		for i, v := range idx {
			binary.LittleEndian.PutUint32(ib[4*i:], v)
		}
		attrs := map[string]any{}
		attrs["POSITION"] = addAccessor(addView(pos, arrayBuffer), len(order), componentFloat, "VEC3", pmin, pmax)
		if hasN {
			attrs["NORMAL"] = addAccessor(addView(nrm, arrayBuffer), len(order), componentFloat, "VEC3", nil, nil)
		}
		if hasUV {
			attrs["TEXCOORD_0"] = addAccessor(addView(uv, arrayBuffer), len(order), componentFloat, "VEC2", nil, nil)
		}
		var imax uint32
		for _, v := range idx {
			imax = max(imax, v)
		}
		ia := addAccessor(addView(ib, elementArrayBuffer), len(idx), componentUint32, "SCALAR", []float64{0}, []float64{float64(imax)})
		mi, ok := matIndex[s]
		if !ok {
			mat, ext := materialJSON(mats[s])
			usedExt = usedExt || ext
			doc.Materials = append(doc.Materials, mat)
			mi = len(doc.Materials) - 1
			matIndex[s] = mi
		}
		prims = append(prims, map[string]any{"attributes": attrs, "indices": ia, "material": mi, "mode": modeTriangles})
		sum.Primitives++
		sum.Triangles += len(tris)
		sum.Vertices += len(order)
	}
	if sum.Primitives == 0 {
		return nil, fmt.Errorf("gltf: no triangle belongs to any segment")
	}
	if bin.Len() > maxBinBytes {
		return nil, fmt.Errorf("gltf: binary chunk of %d bytes exceeds the .glb limit", bin.Len())
	}
	for bin.Len()%4 != 0 {
		bin.WriteByte(0)
	}
	if usedExt {
		doc.ExtensionsUsed = []string{"KHR_materials_ior", "KHR_materials_specular"}
	}
	name := opt.NodeName
	if name == "" {
		name = "object"
	}
	doc.Meshes = []map[string]any{{"name": name, "primitives": prims}}
	doc.Nodes = []map[string]any{{"name": name, "mesh": 0}}
	doc.Scenes = []map[string]any{{"name": name, "nodes": []int{0}}}
	doc.Buffers = []map[string]any{{"byteLength": bin.Len()}}
	js, err := json.Marshal(doc)
	if err != nil {
		return nil, fmt.Errorf("gltf: %w", err)
	}
	for len(js)%4 != 0 {
		js = append(js, ' ')
	}
	total := 12 + 8 + len(js) + 8 + bin.Len()
	var hdr [12]byte
	binary.LittleEndian.PutUint32(hdr[0:], 0x46546C67) // "glTF"
	binary.LittleEndian.PutUint32(hdr[4:], 2)
	binary.LittleEndian.PutUint32(hdr[8:], uint32(total))
	if _, err := w.Write(hdr[:]); err != nil {
		return nil, err
	}
	if err := writeChunk(w, 0x4E4F534A, js); err != nil { // "JSON"
		return nil, err
	}
	if err := writeChunk(w, 0x004E4942, bin.Bytes()); err != nil { // "BIN\0"
		return nil, err
	}
	sum.Bytes = total
	return sum, nil
}

func writeChunk(w io.Writer, typ uint32, data []byte) error {
	var h [8]byte
	binary.LittleEndian.PutUint32(h[0:], uint32(len(data)))
	binary.LittleEndian.PutUint32(h[4:], typ)
	if _, err := w.Write(h[:]); err != nil {
		return err
	}
	_, err := w.Write(data)
	return err
}

func rotate(r [3][3]float64, v []float32) [3]float64 {
	x, y, z := float64(v[0]), float64(v[1]), float64(v[2])
	return [3]float64{
		r[0][0]*x + r[0][1]*y + r[0][2]*z,
		r[1][0]*x + r[1][1]*y + r[1][2]*z,
		r[2][0]*x + r[2][1]*y + r[2][2]*z,
	}
}

func materialJSON(m Material) (map[string]any, bool) {
	pbr := map[string]any{
		"baseColorFactor": []float64{clamp01(m.BaseColor[0]), clamp01(m.BaseColor[1]), clamp01(m.BaseColor[2]), 1},
		"metallicFactor":  clamp01(m.Metallic),
		"roughnessFactor": clamp01(m.Roughness),
	}
	out := map[string]any{"name": m.Name, "pbrMetallicRoughness": pbr}
	if m.Extras != nil {
		out["extras"] = m.Extras
	}
	if !m.UseSpecularExts {
		return out, false
	}
	out["extensions"] = map[string]any{
		"KHR_materials_ior": map[string]any{"ior": m.IOR},
		"KHR_materials_specular": map[string]any{
			"specularFactor":      clamp01(m.SpecularFactor),
			"specularColorFactor": []float64{m.SpecularColor[0], m.SpecularColor[1], m.SpecularColor[2]},
		},
	}
	return out, true
}

func clamp01(v float64) float64 { return math.Min(1, math.Max(0, v)) }
