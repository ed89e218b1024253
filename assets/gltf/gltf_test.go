package gltf

import (
	"bytes"
	"encoding/binary"
	"encoding/json"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"testing"

	"patina/assets/mesh"
	"patina/brdf"
	"patina/render"
	"patina/render/refcheck"
)

// glbFile is what the test's own minimal reader takes out of a .glb
// (glTF 2.0 specification, section "Binary glTF Layout": a 12-byte header,
// then a JSON chunk and a BIN chunk, each with length and type).
type glbFile struct {
	doc map[string]any
	bin []byte
}

func readGLB(t *testing.T, data []byte) glbFile {
	t.Helper()
	if len(data) < 20 || binary.LittleEndian.Uint32(data) != 0x46546C67 || binary.LittleEndian.Uint32(data[4:]) != 2 {
		t.Fatal("not a glTF 2 binary")
	}
	if int(binary.LittleEndian.Uint32(data[8:])) != len(data) {
		t.Fatalf("header length %d, file %d", binary.LittleEndian.Uint32(data[8:]), len(data))
	}
	var g glbFile
	off := 12
	for off < len(data) {
		n := int(binary.LittleEndian.Uint32(data[off:]))
		typ := binary.LittleEndian.Uint32(data[off+4:])
		chunk := data[off+8 : off+8+n]
		if n%4 != 0 {
			t.Fatalf("chunk length %d not a multiple of 4", n)
		}
		switch typ {
		case 0x4E4F534A:
			if err := json.Unmarshal(chunk, &g.doc); err != nil {
				t.Fatal(err)
			}
		case 0x004E4942:
			g.bin = chunk
		}
		off += 8 + n
	}
	return g
}

func (g glbFile) list(key string) []any { v, _ := g.doc[key].([]any); return v }

// positions returns the float32 VEC3 data of accessor i.
func (g glbFile) vec3(t *testing.T, i int) [][3]float64 {
	acc := g.list("accessors")[i].(map[string]any)
	view := g.list("bufferViews")[int(acc["bufferView"].(float64))].(map[string]any)
	off := int(view["byteOffset"].(float64))
	n := int(acc["count"].(float64))
	out := make([][3]float64, n)
	for k := 0; k < n; k++ {
		for c := 0; c < 3; c++ {
			out[k][c] = float64(math.Float32frombits(binary.LittleEndian.Uint32(g.bin[off+12*k+4*c:])))
		}
	}
	return out
}

func fixtureMesh(t *testing.T) *render.Mesh {
	t.Helper()
	m, _, err := mesh.Load(filepath.Join("..", "..", "testdata", "jar-small", "mesh", "jar.ply"))
	if err != nil {
		t.Fatal(err)
	}
	return m
}

func kinds() []brdf.Params {
	gold, _ := brdf.PresetByName("gold")
	return []brdf.Params{
		{Kind: brdf.Dielectric, Diffuse: brdf.RGB{0.11, 0.3, 0.26}, Specular: brdf.RGB{0.045, 0.045, 0.045}, Roughness: 0.2},
		{Kind: brdf.Metal, Specular: gold.Params.Specular, Roughness: 0.4},
		{Kind: brdf.Free, Diffuse: brdf.RGB{0.5, 0.4, 0.3}, Specular: brdf.RGB{0.06, 0.04, 0.03}, Roughness: 0.6},
	}
}

func export(t *testing.T, m *render.Mesh, ps []brdf.Params, up string) []byte {
	t.Helper()
	seg := make([]int32, m.NumTriangles())
	for i := range seg {
		seg[i] = m.Segments[i] % int32(len(ps))
	}
	var mats []Material
	for i, p := range ps {
		mats = append(mats, Map(string(rune('a'+i)), p))
	}
	var buf bytes.Buffer
	if _, err := WriteGLB(&buf, m, seg, mats, Options{Up: up, NodeName: "fixture", Generator: "Patina test"}); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// Reading the file back gives the triangle count, the bounds after the axis
// change and the factors that went in.
func TestReadBack(t *testing.T) {
	m := fixtureMesh(t)
	ps := kinds()
	for _, up := range []string{"+z", "-y", "+x"} {
		g := readGLB(t, export(t, m, ps, up))
		rot, _ := UpRotation(up)
		// Rotations are proper: det = +1 (right-handed frame kept).
		det := rot[0][0]*(rot[1][1]*rot[2][2]-rot[1][2]*rot[2][1]) - rot[0][1]*(rot[1][0]*rot[2][2]-rot[1][2]*rot[2][0]) + rot[0][2]*(rot[1][0]*rot[2][1]-rot[1][1]*rot[2][0])
		if det != 1 {
			t.Errorf("up %s: rotation determinant %v", up, det)
		}
		tris := 0
		lo := [3]float64{math.Inf(1), math.Inf(1), math.Inf(1)}
		hi := [3]float64{math.Inf(-1), math.Inf(-1), math.Inf(-1)}
		for _, pm := range g.list("meshes")[0].(map[string]any)["primitives"].([]any) {
			prim := pm.(map[string]any)
			ia := g.list("accessors")[int(prim["indices"].(float64))].(map[string]any)
			tris += int(ia["count"].(float64)) / 3
			pos := g.vec3(t, int(prim["attributes"].(map[string]any)["POSITION"].(float64)))
			for _, p := range pos {
				for c := 0; c < 3; c++ {
					lo[c], hi[c] = math.Min(lo[c], p[c]), math.Max(hi[c], p[c])
				}
			}
		}
		if tris != m.NumTriangles() {
			t.Errorf("up %s: %d triangles read back, mesh has %d", up, tris, m.NumTriangles())
		}
		bmin, bmax := mesh.Bounds(m)
		// The source's up axis must become +Y: its extent lands on Y.
		upAxis := map[string]int{"+z": 2, "-y": 1, "+x": 0}[up]
		if d := (hi[1] - lo[1]) - (bmax[upAxis] - bmin[upAxis]); math.Abs(d) > 1e-6 {
			t.Errorf("up %s: Y extent %g, source up extent %g", up, hi[1]-lo[1], bmax[upAxis]-bmin[upAxis])
		}
		mats := g.list("materials")
		for i, p := range ps {
			pbr := mats[i].(map[string]any)["pbrMetallicRoughness"].(map[string]any)
			if r := pbr["roughnessFactor"].(float64); math.Abs(r-p.Roughness) > 1e-12 {
				t.Errorf("material %d roughness %v, want %v", i, r, p.Roughness)
			}
		}
	}
}

// The glTF 2.0 specification's Appendix B BRDF (with the F0 of
// KHR_materials_ior and KHR_materials_specular: ((ior-1)/(ior+1))^2 times
// specularColorFactor, and the Fresnel mix
// (1 - max(F)) * baseColor/pi + F * D * V), written out here from the
// specification and evaluated with the factors read back from the file, must
// match Patina's model within the mapping error the summary reports.
func TestAppendixBMatchesWithinReportedError(t *testing.T) {
	m := fixtureMesh(t)
	ps := kinds()
	g := readGLB(t, export(t, m, ps, "+z"))
	for i, p := range ps {
		mat := g.list("materials")[i].(map[string]any)
		pbr := mat["pbrMetallicRoughness"].(map[string]any)
		bc := pbr["baseColorFactor"].([]any)
		metallic := pbr["metallicFactor"].(float64)
		rough := pbr["roughnessFactor"].(float64)
		ior, sf, sc := 1.5, 1.0, [3]float64{1, 1, 1}
		if ext, ok := mat["extensions"].(map[string]any); ok {
			ior = ext["KHR_materials_ior"].(map[string]any)["ior"].(float64)
			s := ext["KHR_materials_specular"].(map[string]any)
			sf = s["specularFactor"].(float64)
			for c, v := range s["specularColorFactor"].([]any) {
				sc[c] = v.(float64)
			}
		}
		reported := MappingError(p, 60)
		worst := 0.0
		for _, to := range []float64{0, 15, 30, 45, 60} {
			for _, ti := range []float64{0, 20, 40, 60} {
				for _, phi := range []float64{0, 90, 180} {
					r := math.Pi / 180
					wo := brdf.Vec{X: math.Sin(to * r), Z: math.Cos(to * r)}
					wi := brdf.Vec{X: math.Sin(ti*r) * math.Cos(phi*r), Y: math.Sin(ti*r) * math.Sin(phi*r), Z: math.Cos(ti * r)}
					want := brdf.Eval(&p, wo, wi)
					got := appendixB(bc, metallic, rough, ior, sf, sc, wo, wi)
					for c := 0; c < 3; c++ {
						worst = math.Max(worst, math.Abs(got[c]-want[c])/want[c])
					}
				}
			}
		}
		if worst > reported+1e-9 {
			t.Errorf("kind %v: Appendix B differs from Patina by %.4g, summary reports %.4g", p.Kind, worst, reported)
		}
		// The metal lobes differ only in the form of the Smith term, which at
		// polar angles up to 60 degrees and roughness 0.4 stays small.
		if p.Kind == brdf.Metal && worst > 0.01 {
			t.Errorf("metal mapping differs by %g", worst)
		}
	}
}

// appendixB is the glTF 2.0 reference BRDF (Appendix B: material_brdf =
// mix(dielectric_brdf, metal_brdf, metallic); the visibility V = G/(4 N.L N.V)
// with the separable form of the Smith joint masking-shadowing function
// G = 2 N.L/(N.L + sqrt(a2 + (1-a2) N.L^2)) * 2 N.V/(N.V + sqrt(a2 + (1-a2) N.V^2)),
// D Trowbridge-Reitz with alpha = roughness^2).
func appendixB(bc []any, metallic, rough, ior, specFactor float64, specColor [3]float64, v, l brdf.Vec) [3]float64 {
	h := brdf.Vec{X: v.X + l.X, Y: v.Y + l.Y, Z: v.Z + l.Z}
	n := math.Sqrt(h.X*h.X + h.Y*h.Y + h.Z*h.Z)
	h = brdf.Vec{X: h.X / n, Y: h.Y / n, Z: h.Z / n}
	NdotL, NdotV, NdotH := l.Z, v.Z, h.Z
	VdotH := v.X*h.X + v.Y*h.Y + v.Z*h.Z
	a := rough * rough
	a2 := a * a
	Vis := 1 / ((NdotL + math.Sqrt(a2+(1-a2)*NdotL*NdotL)) * (NdotV + math.Sqrt(a2+(1-a2)*NdotV*NdotV)))
	x := NdotH*NdotH*(a2-1) + 1
	D := a2 / (math.Pi * x * x)
	var out [3]float64
	f0d := math.Pow((ior-1)/(ior+1), 2)
	var fd [3]float64
	fmax := 0.0
	for c := 0; c < 3; c++ {
		f0 := math.Min(1, f0d*specColor[c])
		fd[c] = specFactor * (f0 + (1-f0)*math.Pow(1-math.Abs(VdotH), 5))
		fmax = math.Max(fmax, fd[c])
	}
	for c := 0; c < 3; c++ {
		base := bc[c].(float64)
		dielectric := (1-fmax)*base/math.Pi + fd[c]*Vis*D
		metal := (base + (1-base)*math.Pow(1-math.Abs(VdotH), 5)) * Vis * D
		out[c] = (1-metallic)*dielectric + metallic*metal
	}
	return out
}

// The Khronos glTF-Validator (npm package gltf-validator) must report no
// errors and no warnings on exports of each model kind.
func TestKhronosValidator(t *testing.T) {
	mod := refcheck.NodeModule(t, "gltf-validator")
	node := refcheck.RequireCommand(t, "node", "nodejs")
	m := fixtureMesh(t)
	dir := t.TempDir()
	for i, p := range kinds() {
		path := filepath.Join(dir, "kind.glb")
		if err := os.WriteFile(path, export(t, m, []brdf.Params{p}, "+z"), 0o644); err != nil {
			t.Fatal(err)
		}
		all := filepath.Join(dir, "all.glb")
		os.WriteFile(all, export(t, m, kinds(), "-y"), 0o644)
		for _, f := range []string{path, all} {
			out, err := exec.Command(node, "-e", validatorScript, mod, f).CombinedOutput()
			if err != nil {
				t.Fatalf("validator: %v\n%s", err, out)
			}
			var r struct{ Errors, Warnings int }
			if err := json.Unmarshal(out, &r); err != nil {
				t.Fatalf("validator output %q: %v", out, err)
			}
			if r.Errors != 0 || r.Warnings != 0 {
				t.Errorf("kind %d (%s): %d errors, %d warnings: %s", i, filepath.Base(f), r.Errors, r.Warnings, out)
			}
		}
	}
}

const validatorScript = `
const v = require(process.argv[1]);
const data = new Uint8Array(require('fs').readFileSync(process.argv[2]));
v.validateBytes(data).then(r => {
  console.log(JSON.stringify({errors: r.issues.numErrors, warnings: r.issues.numWarnings, messages: r.issues.messages.slice(0, 5)}));
}).catch(e => { console.error(String(e)); process.exit(1); });
`
