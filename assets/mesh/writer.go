package mesh

import (
	"bufio"
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"patina/render"
)

// WritePLY writes m as PLY in the given format: "binary_little_endian" (the
// default, also for ""), "binary_big_endian" or "ascii". Vertices carry
// float x y z, then nx ny nz and s t when m has them; faces carry
// "list uchar uint vertex_indices" and "int segment".
//
// The segment written for triangle t is SegmentLabels[Segments[t]].Label
// when every label is a distinct non-negative number (PLY-born meshes);
// otherwise (OBJ-born meshes, named by string with Label -1) it is the index
// into SegmentLabels. Every named segment also gets a header line
// "comment segment N NAME", which ReadPLY reads back into Name.
func WritePLY(w io.Writer, m *render.Mesh, format string) error {
	return writePLY(w, m, format, true)
}

// writePLY is WritePLY, optionally without the face property segment (for
// readers that cannot take scalar face properties in binary files, such as
// meshio 5.0).
func writePLY(w io.Writer, m *render.Mesh, format string, withSegment bool) error {
	if format == "" {
		format = "binary_little_endian"
	}
	var bo binary.ByteOrder
	switch format {
	case "binary_little_endian":
		bo = binary.LittleEndian
	case "binary_big_endian":
		bo = binary.BigEndian
	case "ascii":
	default:
		return fmt.Errorf("mesh: unknown PLY format %q (want binary_little_endian, binary_big_endian or ascii)", format)
	}
	nv, nt := m.NumVertices(), m.NumTriangles()
	if len(m.Positions) != 3*nv || len(m.Indices) != 3*nt {
		return fmt.Errorf("mesh: positions or indices not a multiple of 3")
	}
	hasN := len(m.Normals) == 3*nv && nv > 0
	hasUV := len(m.UVs) == 2*nv && nv > 0
	if len(m.Segments) != 0 && len(m.Segments) != nt {
		return fmt.Errorf("mesh: %d segment entries for %d triangles", len(m.Segments), nt)
	}
	for _, i := range m.Indices {
		if int(i) >= nv {
			return fmt.Errorf("mesh: index %d out of range (vertex count %d)", i, nv)
		}
	}
	// Decide what the segment property holds.
	byLabel := true
	seen := map[int]bool{}
	for _, l := range m.SegmentLabels {
		if l.Label < 0 || l.Label > math.MaxInt32 || seen[l.Label] {
			byLabel = false
		}
		seen[l.Label] = true
	}
	segValue := make([]int32, len(m.SegmentLabels))
	for i, l := range m.SegmentLabels {
		if byLabel {
			segValue[i] = int32(l.Label)
		} else {
			segValue[i] = int32(i)
		}
	}
	for _, s := range m.Segments {
		if s < 0 || int(s) >= len(m.SegmentLabels) {
			return fmt.Errorf("mesh: segment index %d out of range (%d segment labels)", s, len(m.SegmentLabels))
		}
	}

	bw := bufio.NewWriterSize(w, 1<<16)
	fmt.Fprintf(bw, "ply\nformat %s 1.0\ncomment written by Patina\n", format)
	for i, l := range m.SegmentLabels {
		if name := strings.Join(strings.Fields(l.Name), " "); name != "" {
			fmt.Fprintf(bw, "comment segment %d %s\n", segValue[i], name)
		}
	}
	fmt.Fprintf(bw, "element vertex %d\nproperty float x\nproperty float y\nproperty float z\n", nv)
	if hasN {
		bw.WriteString("property float nx\nproperty float ny\nproperty float nz\n")
	}
	if hasUV {
		bw.WriteString("property float s\nproperty float t\n")
	}
	fmt.Fprintf(bw, "element face %d\nproperty list uchar uint vertex_indices\n", nt)
	if withSegment {
		bw.WriteString("property int segment\n")
	}
	bw.WriteString("end_header\n")

	seg := func(t int) int32 {
		if len(m.Segments) == 0 {
			if len(segValue) > 0 {
				return segValue[0]
			}
			return 0
		}
		return segValue[m.Segments[t]]
	}
	if bo == nil {
		var buf []byte
		for i := 0; i < nv; i++ {
			buf = buf[:0]
			vals := m.Positions[3*i : 3*i+3]
			buf = appendFloats(buf, vals)
			if hasN {
				buf = append(buf, ' ')
				buf = appendFloats(buf, m.Normals[3*i:3*i+3])
			}
			if hasUV {
				buf = append(buf, ' ')
				buf = appendFloats(buf, m.UVs[2*i:2*i+2])
			}
			buf = append(buf, '\n')
			bw.Write(buf)
		}
		for t := 0; t < nt; t++ {
			buf = append(buf[:0], '3')
			for _, i := range m.Indices[3*t : 3*t+3] {
				buf = append(buf, ' ')
				buf = strconv.AppendUint(buf, uint64(i), 10)
			}
			if withSegment {
				buf = append(buf, ' ')
				buf = strconv.AppendInt(buf, int64(seg(t)), 10)
			}
			buf = append(buf, '\n')
			bw.Write(buf)
		}
		return bw.Flush()
	}
	var rec [4 * 8]byte
	for i := 0; i < nv; i++ {
		n := 0
		put := func(f float32) { bo.PutUint32(rec[n:], math.Float32bits(f)); n += 4 }
		for _, f := range m.Positions[3*i : 3*i+3] {
			put(f)
		}
		if hasN {
			for _, f := range m.Normals[3*i : 3*i+3] {
				put(f)
			}
		}
		if hasUV {
			for _, f := range m.UVs[2*i : 2*i+2] {
				put(f)
			}
		}
		bw.Write(rec[:n])
	}
	for t := 0; t < nt; t++ {
		rec[0] = 3
		bo.PutUint32(rec[1:], m.Indices[3*t])
		bo.PutUint32(rec[5:], m.Indices[3*t+1])
		bo.PutUint32(rec[9:], m.Indices[3*t+2])
		n := 13
		if withSegment {
			bo.PutUint32(rec[13:], uint32(seg(t)))
			n = 17
		}
		bw.Write(rec[:n])
	}
	return bw.Flush()
}

// appendFloats writes float32 values in the shortest form that reads back
// to the same float32.
func appendFloats(buf []byte, vals []float32) []byte {
	for k, f := range vals {
		if k > 0 {
			buf = append(buf, ' ')
		}
		buf = strconv.AppendFloat(buf, float64(f), 'g', -1, 32)
	}
	return buf
}
