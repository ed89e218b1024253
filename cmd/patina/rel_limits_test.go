package main

import (
	"bytes"
	"context"
	"encoding/binary"
	"hash/crc32"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"patina/assets/capture"
	"patina/assets/hdr"
	"patina/assets/materials"
	"patina/assets/mesh"
	"patina/assets/photo"
	"patina/render"
)

// relPNGHeader returns the signature and IHDR chunk of a PNG of w x h
// RGB 8-bit pixels (PNG specification, ISO/IEC 15948, 11.2.2), with a
// correct CRC, and nothing after it: enough to be refused on its header.
func relPNGHeader(w, h uint32) []byte {
	b := []byte("\x89PNG\r\n\x1a\n")
	ihdr := make([]byte, 0, 17)
	ihdr = append(ihdr, "IHDR"...)
	ihdr = binary.BigEndian.AppendUint32(ihdr, w)
	ihdr = binary.BigEndian.AppendUint32(ihdr, h)
	ihdr = append(ihdr, 8, 2, 0, 0, 0)
	b = binary.BigEndian.AppendUint32(b, 13)
	b = append(b, ihdr...)
	return binary.BigEndian.AppendUint32(b, crc32.ChecksumIEEE(ihdr))
}

// TestReliabilityLimitsNamed exceeds each documented limit that a crafted
// header or a sparse file reaches cheaply, through the subcommand a user
// would run, and checks that the refusal (exit 2) states the limit's
// value, so the user learns what the limit is. The table of every limit
// is testdata/limits-notes.md.
func TestReliabilityLimitsNamed(t *testing.T) {
	dir := t.TempDir()
	file := func(name string, data []byte) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, data, 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	sparse := func(name string, size int64) string {
		p := filepath.Join(dir, name)
		f, err := os.Create(p)
		if err != nil {
			t.Fatal(err)
		}
		if err := f.Truncate(size); err != nil {
			t.Fatal(err)
		}
		f.Close()
		return p
	}
	ply := func(header string) []byte {
		return []byte("ply\nformat ascii 1.0\n" + header + "end_header\n")
	}
	capPath, _ := filepath.Abs(filepath.Join("..", "..", "testdata", "jar-small", "capture.json"))
	mat := file("m.json", []byte(relMaterials))

	var manySegs strings.Builder
	manySegs.WriteString(`{"patina_materials": 1, "capture": "c.json", "segments": [`)
	for i := 0; i <= materials.MaxSegments; i++ {
		if i > 0 {
			manySegs.WriteByte(',')
		}
		manySegs.WriteString(`{"name":"s` + strconv.Itoa(i) + `","model":"metal","diffuse":[0,0,0],"specular":[1,1,1],"roughness":0.5}`)
	}
	manySegs.WriteString("]}")
	var manyElems strings.Builder
	for i := 0; i <= mesh.MaxElements; i++ {
		manyElems.WriteString("element e" + strconv.Itoa(i) + " 0\n")
	}
	var manyProps strings.Builder
	manyProps.WriteString("element vertex 1\n")
	for i := 0; i <= mesh.MaxProperties; i++ {
		manyProps.WriteString("property float p" + strconv.Itoa(i) + "\n")
	}
	var bigFace strings.Builder
	for i := 0; i < 3; i++ {
		bigFace.WriteString("v 0 0 0\n")
	}
	bigFace.WriteString("f")
	for i := 0; i <= mesh.MaxPolygonVertices; i++ {
		bigFace.WriteString(" " + strconv.Itoa(i%3+1))
	}
	bigFace.WriteString("\n")

	cases := []struct {
		limit string
		value int64
		args  []string
	}{
		{"mesh.MaxVertices", mesh.MaxVertices, []string{"check", file("verts.ply", ply("element vertex 40000000\nproperty float x\nproperty float y\nproperty float z\n"))}},
		{"mesh.MaxTriangles", mesh.MaxTriangles, []string{"check", file("faces.ply", ply("element vertex 3\nproperty float x\nproperty float y\nproperty float z\nelement face 100000000\nproperty list uchar int vertex_indices\n"))}},
		{"mesh.MaxPolygonVertices", mesh.MaxPolygonVertices, []string{"check", file("bigface.obj", []byte(bigFace.String()))}},
		{"mesh.MaxLineBytes", mesh.MaxLineBytes, []string{"check", file("longline.obj", []byte("# "+strings.Repeat("x", mesh.MaxLineBytes+10)+"\nv 0 0 0\n"))}},
		{"mesh.MaxHeaderBytes", mesh.MaxHeaderBytes, []string{"check", file("longheader.ply", ply(strings.Repeat("comment "+strings.Repeat("y", 1000)+"\n", mesh.MaxHeaderBytes/1000+2)))}},
		{"mesh.MaxElements", mesh.MaxElements, []string{"check", file("elements.ply", ply(manyElems.String()))}},
		{"mesh.MaxProperties", mesh.MaxProperties, []string{"check", file("props.ply", ply(manyProps.String()))}},
		{"hdr.MaxPixels (RGBE)", hdr.MaxPixels, []string{"check", file("big.hdr", []byte("#?RADIANCE\nFORMAT=32-bit_rle_rgbe\n\n-Y 20000 +X 20000\n"))}},
		{"hdr.MaxPixels (PFM)", hdr.MaxPixels, []string{"check", file("big.pfm", []byte("PF\n20000 20000\n-1.0\n"))}},
		{"photo.MaxPixels", photo.MaxPixels, []string{"check", file("big.png", relPNGHeader(20000, 20000))}},
		{"photo.MaxDimension", photo.MaxDimension, []string{"check", file("wide.png", relPNGHeader(70000, 10))}},
		{"capture.MaxFileSize", capture.MaxFileSize, []string{"check", sparse("huge-capture.json", capture.MaxFileSize+1)}},
		{"capture.MaxPhotos", capture.MaxPhotos, []string{"fit", filepath.Join("..", "..", "testdata", "bad", "capture-too-many-photos.json"), "-o", filepath.Join(dir, "out.json")}},
		{"materials.MaxFileSize", materials.MaxFileSize, []string{"render", capPath, "-materials", sparse("huge-materials.json", materials.MaxFileSize+1), "-o", filepath.Join(dir, "out.png")}},
		{"materials.MaxSegments", materials.MaxSegments, []string{"render", capPath, "-materials", file("segs.json", []byte(manySegs.String())), "-o", filepath.Join(dir, "out.png")}},
		{"render.MaxEnvironmentSide", render.MaxEnvironmentSide, []string{"render", capPath, "-materials", mat, "-env", "studio", "-env-size", "100000", "-o", filepath.Join(dir, "out.png")}},
		{"trace maxRayRecords", maxRayRecords, []string{"trace", "-mesh", filepath.Join(filepath.Dir(capPath), "mesh", "jar.ply"), "-rays", sparse("many.bin", (maxRayRecords+1)*rayRecordBytes)}},
	}
	for _, c := range cases {
		var o, e bytes.Buffer
		code := run(context.Background(), c.args, &o, &e)
		all := o.String() + e.String()
		want := strconv.FormatInt(c.value, 10)
		if code != 2 || !strings.Contains(all, want) {
			t.Errorf("%s = %s: exit %d, want 2 and the value in the message:\n%s", c.limit, want, code, strings.TrimSpace(all))
		}
		t.Logf("%s: %s", c.limit, strings.TrimSpace(all))
	}
	if _, err := os.Stat(filepath.Join(dir, "out.png")); err == nil {
		t.Error("a refused render wrote out.png")
	}
}
