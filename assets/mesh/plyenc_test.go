package mesh

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"math"
	"strconv"
)

// A small PLY encoder for the tests, independent of WritePLY, that can
// write any property type in any encoding, so the reader is tested against
// files laid out as Turk's description says rather than as Patina writes
// them.

type tProp struct {
	name       string
	typ        string // scalar type, or list item type
	countType  string // "" for a scalar
	itemsPerRc func(rec int) int
}

type tElem struct {
	name  string
	props []tProp
	// value returns property p of record r (item k of a list).
	value func(r, p, k int) float64
	count int
}

func encodePLY(format string, elems []tElem, comments ...string) []byte {
	var b bytes.Buffer
	fmt.Fprintf(&b, "ply\nformat %s 1.0\n", format)
	for _, c := range comments {
		fmt.Fprintf(&b, "comment %s\n", c)
	}
	for _, e := range elems {
		fmt.Fprintf(&b, "element %s %d\n", e.name, e.count)
		for _, p := range e.props {
			if p.countType != "" {
				fmt.Fprintf(&b, "property list %s %s %s\n", p.countType, p.typ, p.name)
			} else {
				fmt.Fprintf(&b, "property %s %s\n", p.typ, p.name)
			}
		}
	}
	b.WriteString("end_header\n")
	var bo binary.ByteOrder = binary.LittleEndian
	if format == "binary_big_endian" {
		bo = binary.BigEndian
	}
	put := func(typ string, v float64) {
		if format == "ascii" {
			switch typ {
			case "float", "float32":
				b.WriteString(strconv.FormatFloat(v, 'g', -1, 32))
			case "double", "float64":
				b.WriteString(strconv.FormatFloat(v, 'g', -1, 64))
			default:
				b.WriteString(strconv.FormatInt(int64(v), 10))
			}
			b.WriteByte(' ')
			return
		}
		var buf [8]byte
		switch typ {
		case "char", "int8":
			buf[0] = byte(int8(v))
			b.Write(buf[:1])
		case "uchar", "uint8":
			buf[0] = uint8(v)
			b.Write(buf[:1])
		case "short", "int16":
			bo.PutUint16(buf[:], uint16(int16(v)))
			b.Write(buf[:2])
		case "ushort", "uint16":
			bo.PutUint16(buf[:], uint16(v))
			b.Write(buf[:2])
		case "int", "int32":
			bo.PutUint32(buf[:], uint32(int32(v)))
			b.Write(buf[:4])
		case "uint", "uint32":
			bo.PutUint32(buf[:], uint32(v))
			b.Write(buf[:4])
		case "float", "float32":
			bo.PutUint32(buf[:], math.Float32bits(float32(v)))
			b.Write(buf[:4])
		case "double", "float64":
			bo.PutUint64(buf[:], math.Float64bits(v))
			b.Write(buf[:8])
		default:
			panic("type " + typ)
		}
	}
	for _, e := range elems {
		for r := 0; r < e.count; r++ {
			for pi, p := range e.props {
				if p.countType != "" {
					n := p.itemsPerRc(r)
					put(p.countType, float64(n))
					for k := 0; k < n; k++ {
						put(p.typ, e.value(r, pi, k))
					}
				} else {
					put(p.typ, e.value(r, pi, 0))
				}
			}
			if format == "ascii" {
				b.Truncate(b.Len() - 1)
				b.WriteByte('\n')
			}
		}
	}
	return b.Bytes()
}
