package hdr

import (
	"bufio"
	"encoding/binary"
	"fmt"
	"image"
	"io"
	"math"
	"strconv"

	"patina/render/colour"
)

// PFMInfo describes the header of a PFM file.
type PFMInfo struct {
	Channels      int // 3 for "PF" (colour), 1 for "Pf" (grey)
	Width, Height int
	// Scale is the header's scale value. Its sign gives the byte order;
	// its magnitude is recorded but not applied to the samples, as most
	// readers do (OpenCV divides the samples by it; files written by Patina
	// and OpenCV both use magnitude 1).
	Scale        float64
	LittleEndian bool
	DataOffset   int64 // byte offset of the first sample
}

func pfmErr(line int, off int64, format string, args ...any) *FormatError {
	return &FormatError{"PFM", line, -1, off, fmt.Sprintf(format, args...)}
}

func isSpace(c byte) bool {
	return c == ' ' || c == '\t' || c == '\n' || c == '\r' || c == '\v' || c == '\f'
}

// pfmHeader reads the header: "PF" or "Pf", whitespace, width, whitespace,
// height, whitespace, scale and exactly one whitespace byte, then the
// samples begin.
func pfmHeader(b *byteReader, limit int) (*PFMInfo, error) {
	p0, ok0 := b.readByte()
	p1, ok1 := b.readByte()
	if !ok0 || !ok1 || p0 != 'P' || (p1 != 'F' && p1 != 'f') {
		return nil, pfmErr(1, 0, "expected the magic PF (colour) or Pf (grey)")
	}
	info := &PFMInfo{Channels: 3}
	if p1 == 'f' {
		info.Channels = 1
	}
	line := 1
	if c, ok := b.peekByte(); !ok || !isSpace(c) {
		return nil, pfmErr(1, 2, "expected whitespace after the magic P%c", p1)
	}
	// token skips whitespace and returns the next word and where it began;
	// it consumes the one whitespace byte that ends the word.
	token := func(what string) (string, int, int64, error) {
		for {
			c, ok := b.peekByte()
			if !ok {
				return "", line, b.offset(), pfmErr(line, b.offset(), "header ends before the %s", what)
			}
			if !isSpace(c) {
				break
			}
			if c == '\n' {
				line++
			}
			b.pos++
		}
		tokLine, start := line, b.offset()
		var t []byte
		for {
			c, ok := b.readByte()
			if !ok {
				return "", tokLine, start, pfmErr(tokLine, b.offset(), "header ends in the %s", what)
			}
			if isSpace(c) {
				if c == '\n' {
					line++
				}
				break
			}
			if len(t) >= 40 {
				return "", tokLine, start, pfmErr(tokLine, start, "%s %q... is too long", what, t)
			}
			t = append(t, c)
		}
		return string(t), tokLine, start, nil
	}
	var dims [2]int
	var dimLine int
	var dimOff int64
	for i, what := range []string{"width", "height"} {
		t, l, off, err := token(what)
		if err != nil {
			return nil, err
		}
		n, ok := parseDim(t)
		if !ok {
			return nil, pfmErr(l, off, "%s %q, expected a positive decimal integer", what, clip(t))
		}
		dims[i], dimLine, dimOff = n, l, off
	}
	t, l, off, err := token("scale")
	if err != nil {
		return nil, err
	}
	s, perr := strconv.ParseFloat(t, 64)
	if perr != nil || math.IsNaN(s) || math.IsInf(s, 0) || s == 0 {
		return nil, pfmErr(l, off, "scale %q, expected a finite non-zero number (negative: little-endian samples, positive: big-endian)", clip(t))
	}
	if err := checkSize("PFM", dimLine, dimOff, dims[0], dims[1], limit); err != nil {
		return nil, err
	}
	info.Width, info.Height = dims[0], dims[1]
	info.Scale, info.LittleEndian = s, s < 0
	info.DataOffset = b.offset()
	return info, nil
}

// DecodePFMConfig reads only the header of a PFM file.
func DecodePFMConfig(r io.Reader) (*PFMInfo, error) {
	return pfmHeader(newByteReader(r), MaxPixels)
}

// DecodePFM decodes a PFM file, colour or grey (grey samples are copied to
// all three channels), in the byte order the scale's sign gives, with the
// rows put back top to bottom. Samples are stored as they are, NaN and
// infinities included (see Image.CheckFinite). Header fields may be
// separated by any whitespace; exactly one whitespace byte ends the scale.
// Comments are not part of the format and are refused.
func DecodePFM(r io.Reader) (*Image, error) {
	m, _, err := DecodePFMInfo(r)
	return m, err
}

// DecodePFMInfo is DecodePFM that also returns the header.
func DecodePFMInfo(r io.Reader) (*Image, *PFMInfo, error) {
	return decodePFM(r, MaxPixels)
}

func decodePFM(r io.Reader, limit int) (*Image, *PFMInfo, error) {
	b := newByteReader(r)
	info, err := pfmHeader(b, limit)
	if err != nil {
		return nil, nil, err
	}
	w, h, ch := info.Width, info.Height, info.Channels
	rowBytes := int64(4 * ch * w)
	rem := b.remaining()
	pix := newPixBuffer(3*w*h, rem >= 0 && rem >= rowBytes*int64(h))
	for k := 0; k < h; k++ { // file row k is image row h-1-k
		pix.extend(3 * w * (k + 1))
		out := pix.pix[3*w*k : 3*w*(k+1)]
		for i := 0; i < w*ch; {
			if !b.need(4) {
				if err := b.ioErr(); err != nil {
					return nil, nil, fmt.Errorf("hdr: PFM scanline %d: %w", h-1-k, err)
				}
				return nil, nil, &FormatError{"PFM", 0, h - 1 - k, b.base + int64(b.end), fmt.Sprintf(
					"pixel data ends in file row %d of %d (rows run bottom to top), expected %d bytes of samples after the header",
					k, h, rowBytes*int64(h))}
			}
			n := min((b.end-b.pos)/4, w*ch-i)
			src := b.buf[b.pos : b.pos+4*n]
			b.pos += 4 * n
			if ch == 3 {
				decodeSamples(out[i:i+n], src, info.LittleEndian)
			} else {
				decodeGreySamples(out[3*i:3*(i+n)], src, info.LittleEndian)
			}
			i += n
		}
	}
	flipRows(pix.pix, 3*w, h)
	return &Image{Width: w, Height: h, Pix: pix.pix}, info, nil
}

// decodeSamples converts len(dst) float32 samples from src; the byte order
// is a branch outside the loop so each loop inlines its conversion.
func decodeSamples(dst []float32, src []byte, little bool) {
	src = src[:4*len(dst)]
	if little {
		for j := range dst {
			dst[j] = math.Float32frombits(binary.LittleEndian.Uint32(src[4*j:]))
		}
		return
	}
	for j := range dst {
		dst[j] = math.Float32frombits(binary.BigEndian.Uint32(src[4*j:]))
	}
}

// decodeGreySamples converts len(dst)/3 samples, each to three channels.
func decodeGreySamples(dst []float32, src []byte, little bool) {
	n := len(dst) / 3
	src = src[:4*n]
	for j := 0; j < n; j++ {
		var u uint32
		if little {
			u = binary.LittleEndian.Uint32(src[4*j:])
		} else {
			u = binary.BigEndian.Uint32(src[4*j:])
		}
		v := math.Float32frombits(u)
		d := dst[3*j : 3*j+3 : 3*j+3]
		d[0], d[1], d[2] = v, v, v
	}
}

func flipRows(p []float32, stride, h int) {
	tmp := make([]float32, stride)
	for i, j := 0, h-1; i < j; i, j = i+1, j-1 {
		a, b := p[i*stride:(i+1)*stride], p[j*stride:(j+1)*stride]
		copy(tmp, a)
		copy(a, b)
		copy(b, tmp)
	}
}

// PFMOptions selects what EncodePFMWith writes. The zero value writes
// colour ("PF") little-endian samples, like EncodePFM.
type PFMOptions struct {
	// Grey writes one channel ("Pf"): a pixel whose three channels are equal
	// is written exactly, any other as its Rec. 709 relative luminance.
	Grey bool
	// BigEndian writes big-endian samples (scale 1.0) instead of
	// little-endian ones (scale -1.0).
	BigEndian bool
}

// EncodePFM writes m as a colour PFM ("PF", little-endian, scale -1.0),
// rows bottom to top as the format stores them.
func EncodePFM(w io.Writer, m *Image) error { return EncodePFMWith(w, m, PFMOptions{}) }

// EncodePFMGrey writes m as a grey PFM ("Pf"); see PFMOptions.Grey.
func EncodePFMGrey(w io.Writer, m *Image) error {
	return EncodePFMWith(w, m, PFMOptions{Grey: true})
}

// EncodePFMWith writes m as a PFM file with the given options.
func EncodePFMWith(w io.Writer, m *Image, opt PFMOptions) error {
	if err := checkImage(m); err != nil {
		return err
	}
	bw := bufio.NewWriterSize(w, 64<<10)
	magic, scale := "PF", "-1.0"
	if opt.Grey {
		magic = "Pf"
	}
	var order binary.ByteOrder = binary.LittleEndian
	if opt.BigEndian {
		order, scale = binary.BigEndian, "1.0"
	}
	fmt.Fprintf(bw, "%s\n%d %d\n%s\n", magic, m.Width, m.Height, scale)
	ch := 3
	if opt.Grey {
		ch = 1
	}
	row := make([]byte, 4*ch*m.Width)
	for y := m.Height - 1; y >= 0; y-- {
		src := m.Pix[3*y*m.Width : 3*(y+1)*m.Width]
		if ch == 3 {
			for i, v := range src {
				order.PutUint32(row[4*i:], math.Float32bits(v))
			}
		} else {
			for x := 0; x < m.Width; x++ {
				r, g, b := src[3*x], src[3*x+1], src[3*x+2]
				v := r
				// Compare bits, so NaN payloads and -0 survive a grey round trip.
				if math.Float32bits(r) != math.Float32bits(g) || math.Float32bits(g) != math.Float32bits(b) {
					v = float32(colour.Luminance(float64(r), float64(g), float64(b)))
				}
				order.PutUint32(row[4*x:], math.Float32bits(v))
			}
		}
		if _, err := bw.Write(row); err != nil {
			return err
		}
	}
	return bw.Flush()
}

func decodePFMImage(r io.Reader) (image.Image, error) {
	m, err := DecodePFM(r)
	if err != nil {
		return nil, err
	}
	return m, nil
}

func decodePFMImageConfig(r io.Reader) (image.Config, error) {
	info, err := DecodePFMConfig(r)
	if err != nil {
		return image.Config{}, err
	}
	return image.Config{ColorModel: RGBFModel, Width: info.Width, Height: info.Height}, nil
}

func init() {
	image.RegisterFormat("pfm", "PF", decodePFMImage, decodePFMImageConfig)
	image.RegisterFormat("pfm", "Pf", decodePFMImage, decodePFMImageConfig)
}
