package hdr

import (
	"bytes"
	"fmt"
	"image"
	"io"
	"math"
	"strconv"
	"strings"
)

// RGBEInfo holds the header of a Radiance RGBE file.
type RGBEInfo struct {
	ProgramType string // from the first line: "RADIANCE" or "RGBE"
	Format      string // the FORMAT= value: always "32-bit_rle_rgbe" after a successful read

	// Exposure is the product of all EXPOSURE= values (1 when there are
	// none). Radiance multiplies pixel values by each exposure it applies and
	// records it, so the decoders divide by the product to return the
	// original radiance.
	Exposure float64
	// ColorCorr is the per-channel product of all COLORCORR= values (1, 1, 1
	// when there are none); the decoders divide by it as well, for the same
	// reason.
	ColorCorr [3]float64
	// Primaries is the PRIMARIES= value, if any. It is recorded but not
	// applied: Patina takes RGBE pixels as linear sRGB/Rec. 709 (common
	// practice for environment maps).
	Primaries string
	Comments  []string // header lines starting with '#' after the first line
	Lines     []string // every header line after the first and before the blank line, in order

	Width, Height int
	DataOffset    int64 // byte offset of the first scanline
}

// Limits of the header, so a file of garbage cannot make the reader hold a
// large amount of text.
const (
	maxHeaderLine  = 64 << 10
	maxHeaderBytes = 1 << 20
)

const (
	minRLEWidth = 8     // new-style run-length scanlines are used for widths 8..32767 (Radiance MINELEN, MAXELEN)
	maxRLEWidth = 32767 // the high width byte must leave its top bit clear
)

func rgbeErr(line int, off int64, format string, args ...any) *FormatError {
	return &FormatError{"RGBE", line, -1, off, fmt.Sprintf(format, args...)}
}

// readHeaderLine returns the next line without its newline (and without a
// trailing carriage return).
// expect says what was expected there, for the error at the end of input.
func readHeaderLine(b *byteReader, line int, total *int, expect string) (string, error) {
	start := b.offset()
	var sb []byte
	for {
		c, ok := b.readByte()
		if !ok {
			if err := b.ioErr(); err != nil {
				return "", err
			}
			return "", rgbeErr(line, b.offset(), "input ends in the header, expected %s", expect)
		}
		*total++
		if c == '\n' {
			break
		}
		if len(sb) >= maxHeaderLine || *total > maxHeaderBytes {
			return "", rgbeErr(line, start, "header line longer than %d bytes or header longer than %d bytes", maxHeaderLine, maxHeaderBytes)
		}
		sb = append(sb, c)
	}
	return string(bytes.TrimSuffix(sb, []byte{'\r'})), nil
}

// readRGBEHeader reads the header up to and including the resolution line
// and checks the dimensions against limit.
func readRGBEHeader(b *byteReader, limit int) (*RGBEInfo, error) {
	info := &RGBEInfo{Exposure: 1, ColorCorr: [3]float64{1, 1, 1}}
	total := 0
	first, err := readHeaderLine(b, 1, &total, "a first line #?RADIANCE or #?RGBE")
	if err != nil {
		return nil, err
	}
	switch {
	case strings.TrimSpace(first) == "#?RADIANCE":
		info.ProgramType = "RADIANCE"
	case strings.TrimSpace(first) == "#?RGBE":
		info.ProgramType = "RGBE"
	default:
		return nil, rgbeErr(1, 0, "first line %q, expected #?RADIANCE or #?RGBE", clip(first))
	}
	line := 1
	for {
		line++
		off := b.offset()
		s, err := readHeaderLine(b, line, &total, "header lines ending with a blank line, then the resolution line")
		if err != nil {
			return nil, err
		}
		if s == "" {
			break
		}
		info.Lines = append(info.Lines, s)
		key, val, hasEq := strings.Cut(s, "=")
		switch {
		case strings.HasPrefix(s, "#"):
			info.Comments = append(info.Comments, s)
		case hasEq && key == "FORMAT":
			f := strings.TrimSpace(val)
			if info.Format != "" && info.Format != f {
				return nil, rgbeErr(line, off, "second FORMAT= line %q contradicts %q", clip(f), info.Format)
			}
			switch f {
			case "32-bit_rle_rgbe":
			case "32-bit_rle_xyze":
				// Radiance's XYZ is relative to an equal-energy white; turning it
				// into Patina's D65 linear sRGB needs a choice of chromatic
				// adaptation that the file does not record, so refuse plainly.
				return nil, &UnsupportedError{"RGBE", line, "FORMAT=32-bit_rle_xyze (CIE XYZ pixels) is not supported; convert the file to 32-bit_rle_rgbe"}
			default:
				return nil, &UnsupportedError{"RGBE", line, fmt.Sprintf("FORMAT=%s is not supported, expected FORMAT=32-bit_rle_rgbe", clip(f))}
			}
			info.Format = f
		case hasEq && key == "EXPOSURE":
			v, err := strconv.ParseFloat(strings.TrimSpace(val), 64)
			if err != nil || !(v > 0) || math.IsInf(v, 0) {
				return nil, rgbeErr(line, off, "EXPOSURE=%s, expected a positive finite number", clip(strings.TrimSpace(val)))
			}
			info.Exposure *= v
			if !(info.Exposure > 0) || math.IsInf(info.Exposure, 0) {
				return nil, rgbeErr(line, off, "product of the EXPOSURE= values is out of range")
			}
		case hasEq && key == "COLORCORR":
			f := strings.Fields(val)
			if len(f) != 3 {
				return nil, rgbeErr(line, off, "COLORCORR=%s, expected three positive numbers", clip(strings.TrimSpace(val)))
			}
			for i, t := range f {
				v, err := strconv.ParseFloat(t, 64)
				if err != nil || !(v > 0) || math.IsInf(v, 0) {
					return nil, rgbeErr(line, off, "COLORCORR= value %q, expected a positive finite number", clip(t))
				}
				info.ColorCorr[i] *= v
				if !(info.ColorCorr[i] > 0) || math.IsInf(info.ColorCorr[i], 0) {
					return nil, rgbeErr(line, off, "product of the COLORCORR= values is out of range")
				}
			}
		case hasEq && key == "PRIMARIES":
			info.Primaries = strings.TrimSpace(val)
		}
	}
	if info.Format == "" {
		// The Radiance tools tolerate a missing FORMAT line, but other readers
		// do not, and without it a file of another pixel format could be read
		// as RGBE: Patina asks for it.
		return nil, rgbeErr(line, b.offset()-1, "header has no FORMAT= line, expected FORMAT=32-bit_rle_rgbe before the blank line")
	}
	line++
	off := b.offset()
	res, err := readHeaderLine(b, line, &total, "the resolution line \"-Y height +X width\"")
	if err != nil {
		return nil, err
	}
	w, h, err := parseResolution(res, line, off)
	if err != nil {
		return nil, err
	}
	if err := checkSize("RGBE", line, off, w, h, limit); err != nil {
		return nil, err
	}
	info.Width, info.Height = w, h
	info.DataOffset = b.offset()
	return info, nil
}

// parseResolution reads the resolution line. Only "-Y H +X W" (rows top to
// bottom, pixels left to right, the standard orientation) is accepted.
func parseResolution(s string, line int, off int64) (w, h int, err error) {
	f := strings.Fields(s)
	bad := func() (int, int, error) {
		return 0, 0, rgbeErr(line, off, "resolution line %q, expected \"-Y height +X width\"", clip(s))
	}
	if len(f) != 4 {
		return bad()
	}
	axis := func(t string) byte {
		if len(t) == 2 && (t[0] == '-' || t[0] == '+') && (t[1] == 'X' || t[1] == 'Y') {
			return t[1]
		}
		return 0
	}
	a1, a2 := axis(f[0]), axis(f[2])
	if a1 == 0 || a2 == 0 || a1 == a2 {
		return bad()
	}
	n1, ok1 := parseDim(f[1])
	n2, ok2 := parseDim(f[3])
	if !ok1 || !ok2 {
		return bad()
	}
	if f[0] != "-Y" || f[2] != "+X" {
		return 0, 0, &UnsupportedError{"RGBE", line, fmt.Sprintf("orientation %q is not supported; only \"-Y height +X width\" (rows top to bottom, left to right) is", clip(s))}
	}
	return n2, n1, nil
}

// parseDim parses a decimal dimension of at most nine digits, so no product
// of two can overflow.
func parseDim(t string) (int, bool) {
	if len(t) == 0 || len(t) > 9 {
		return 0, false
	}
	n := 0
	for i := 0; i < len(t); i++ {
		if t[i] < '0' || t[i] > '9' {
			return 0, false
		}
		n = n*10 + int(t[i]-'0')
	}
	return n, true
}

// clip shortens text quoted in an error.
func clip(s string) string {
	if len(s) > 60 {
		return s[:60] + "..."
	}
	return s
}

// DecodeRGBEConfig reads only the header of a Radiance RGBE file.
func DecodeRGBEConfig(r io.Reader) (*RGBEInfo, error) {
	return readRGBEHeader(newByteReader(r), MaxPixels)
}

// DecodeRGBE decodes a Radiance RGBE file: flat, old-style run-length and
// new-style run-length scanlines in any mix, FORMAT=32-bit_rle_rgbe, the
// -Y H +X W orientation. Pixels are divided by the header's EXPOSURE= and
// COLORCORR= products (see RGBEInfo). Mantissas decode as (m + 0.5) 2^(e-136)
// (see the package documentation). Data after the last scanline is ignored.
func DecodeRGBE(r io.Reader) (*Image, *RGBEInfo, error) {
	return decodeRGBE(r, MaxPixels)
}

func decodeRGBE(r io.Reader, limit int) (*Image, *RGBEInfo, error) {
	return decodeRGBEWith(r, limit, true)
}

// decodeRGBEWith can turn the fast run-length path off, so tests can check
// that both paths agree.
func decodeRGBEWith(r io.Reader, limit int, fast bool) (*Image, *RGBEInfo, error) {
	b := newByteReader(r)
	info, err := readRGBEHeader(b, limit)
	if err != nil {
		return nil, nil, err
	}
	d := rgbeDecoder{b: b, w: info.Width, h: info.Height, fast: fast}
	rle := d.w >= minRLEWidth && d.w <= maxRLEWidth
	minRow := int64(4 * d.w) // a flat scanline
	if rle {
		// The shortest new-style scanline: its 4-byte header and, per channel,
		// two bytes for each run of up to 127.
		minRow = 4 + 8*int64((d.w+126)/127)
	}
	rem := b.remaining()
	d.pix = newPixBuffer(3*d.w*d.h, rem >= 0 && rem >= minRow*int64(d.h))
	for c := 0; c < 3; c++ {
		k := info.Exposure * info.ColorCorr[c]
		for e := 1; e < 256; e++ {
			d.mul[c][e] = float32(math.Ldexp(1, e-136) / k)
		}
	}
	if rle {
		d.scan = make([]byte, 4*d.w)
	}
	for y := 0; y < d.h; y++ {
		if rle {
			if !b.need(4) {
				return nil, nil, d.truncated(y)
			}
			p := b.buf[b.pos : b.pos+4]
			if p[0] == 2 && p[1] == 2 && p[2]&0x80 == 0 {
				if err := d.rleScanline(y); err != nil {
					return nil, nil, err
				}
				continue
			}
		}
		if err := d.flatScanline(y); err != nil {
			return nil, nil, err
		}
	}
	return &Image{Width: d.w, Height: d.h, Pix: d.pix.pix}, info, nil
}

type rgbeDecoder struct {
	b    *byteReader
	w, h int
	pix  *pixBuffer
	mul  [3][256]float32 // 2^(e-136) / (exposure * colour correction), 0 for e = 0
	scan []byte          // four planes of one new-style scanline
	fast bool            // try rleFast first
}

func (d *rgbeDecoder) truncated(y int) error {
	if err := d.b.ioErr(); err != nil {
		return fmt.Errorf("hdr: RGBE scanline %d: %w", y, err)
	}
	// The offset is the end of the input: the length of the file.
	end := d.b.base + int64(d.b.end)
	return &FormatError{"RGBE", 0, y, end, fmt.Sprintf("pixel data ends in scanline %d of %d, expected more bytes", y, d.h)}
}

var channelNames = [4]string{"red", "green", "blue", "exponent"}

// rleScanline decodes one new-style run-length scanline: the header
// 2, 2, width>>8, width&255, then each of the four channels in turn as
// codes: c > 128 is a run of c-128 copies of the next byte, 0 < c <= 128 is
// c literal bytes.
func (d *rgbeDecoder) rleScanline(y int) error {
	b, w := d.b, d.w
	hdrOff := b.offset()
	p := b.buf[b.pos : b.pos+4]
	if n := int(p[2])<<8 | int(p[3]); n != w {
		return &FormatError{"RGBE", 0, y, hdrOff, fmt.Sprintf("run-length scanline header gives width %d, expected %d", n, w)}
	}
	// Fast path: when the buffer holds the longest scanline a well-formed
	// stream can take (every code a literal of at most 128), decode from the
	// buffer directly. It gives up on anything unusual (zero-length literals
	// can make a scanline longer, and errors need the careful path) and the
	// careful path below starts the scanline over.
	if maxRow := 4 + 4*(w+(w+127)/128); d.fast && maxRow <= readBufSize && b.need(maxRow) && d.rleFast(b.buf[b.pos:b.end]) {
		d.convertScanline(y)
		return nil
	}
	b.pos += 4
	for c := 0; c < 4; c++ {
		plane := d.scan[c*w : (c+1)*w : (c+1)*w]
		for j := 0; j < w; {
			codeOff := b.offset()
			code, ok := b.readByte()
			if !ok {
				return d.truncated(y)
			}
			if code > 128 {
				n := int(code & 127)
				v, ok := b.readByte()
				if !ok {
					return d.truncated(y)
				}
				if j+n > w {
					return &FormatError{"RGBE", 0, y, codeOff, fmt.Sprintf("%s channel: run of %d at x = %d overruns the scanline width %d", channelNames[c], n, j, w)}
				}
				run := plane[j : j+n]
				for i := range run {
					run[i] = v
				}
				j += n
			} else {
				n := int(code)
				if j+n > w {
					return &FormatError{"RGBE", 0, y, codeOff, fmt.Sprintf("%s channel: %d literal bytes at x = %d overrun the scanline width %d", channelNames[c], n, j, w)}
				}
				if b.readFull(plane[j:j+n]) < n {
					return d.truncated(y)
				}
				j += n
			}
		}
	}
	d.convertScanline(y)
	return nil
}

// rleFast decodes the four channel planes of a well-formed new-style
// scanline from src (which starts at its 4-byte header) and consumes it, or
// reports false and consumes nothing.
func (d *rgbeDecoder) rleFast(src []byte) bool {
	w := d.w
	k := 4
	for c := 0; c < 4; c++ {
		plane := d.scan[c*w : (c+1)*w : (c+1)*w]
		for j := 0; j < w; {
			if k+1 >= len(src) {
				return false
			}
			code := int(src[k])
			k++
			if code > 128 {
				n := code & 127
				if j+n > w {
					return false
				}
				v := src[k]
				k++
				run := plane[j : j+n]
				for i := range run {
					run[i] = v
				}
				j += n
			} else {
				n := code
				if n == 0 || j+n > w || k+n > len(src) {
					return false
				}
				copy(plane[j:j+n], src[k:k+n])
				k += n
				j += n
			}
		}
	}
	d.b.pos += k
	return true
}

// convertScanline turns the planes of scanline y into floats.
func (d *rgbeDecoder) convertScanline(y int) {
	w := d.w
	d.pix.extend(3 * (y + 1) * w)
	ep := d.scan[3*w : 4*w]
	// Equal lengths let the compiler drop the bounds checks in the loop.
	rp, gp, bp := d.scan[:len(ep)], d.scan[w:w+len(ep)], d.scan[2*w:2*w+len(ep)]
	out := d.pix.pix[3*y*w : 3*y*w+3*len(ep)]
	mr, mg, mb := &d.mul[0], &d.mul[1], &d.mul[2]
	for x, e := range ep {
		o := out[3*x : 3*x+3 : 3*x+3]
		o[0] = (float32(rp[x]) + 0.5) * mr[e]
		o[1] = (float32(gp[x]) + 0.5) * mg[e]
		o[2] = (float32(bp[x]) + 0.5) * mb[e]
	}
}

// flatScanline decodes one scanline of 4-byte pixels, in which a pixel
// 1, 1, 1, n is an old-style run: repeat the previous pixel n times, and n is
// shifted left by 8 more bits for each run that directly follows a run
// (Radiance's oldreadcolrs). A run at the start of a scanline repeats the
// last pixel of the previous scanline; one at the start of the image has no
// pixel to repeat and is an error.
func (d *rgbeDecoder) flatScanline(y int) error {
	b, w := d.b, d.w
	rowStart := 3 * y * w
	rowEnd := rowStart + 3*w
	i := rowStart // next float of the row
	shift := uint(0)
	for i < rowEnd {
		off := b.offset()
		if !b.need(4) {
			return d.truncated(y)
		}
		p := b.buf[b.pos : b.pos+4 : b.pos+4]
		b.pos += 4
		if p[0] == 1 && p[1] == 1 && p[2] == 1 {
			if p[3] == 0 {
				shift += 8
				continue
			}
			if i == 0 {
				return &FormatError{"RGBE", 0, y, off, "old-style run (1, 1, 1, n) at the first pixel of the image, which has no previous pixel to repeat"}
			}
			left := uint64((rowEnd - i) / 3)
			if shift >= 32 || uint64(p[3])<<shift > left {
				n := "more than 2^32"
				if shift < 32 {
					n = strconv.FormatUint(uint64(p[3])<<shift, 10)
				}
				return &FormatError{"RGBE", 0, y, off, fmt.Sprintf("old-style run of %s pixels at x = %d overruns the scanline width %d", n, (i-rowStart)/3, w)}
			}
			n := int(p[3]) << shift
			shift += 8
			end := i + 3*n
			for i < end {
				// Grow in steps, so the copy loop stays simple.
				chunk := min(end, i+3*4096)
				d.pix.extend(chunk)
				all := d.pix.pix
				r, g, bl := all[i-3], all[i-2], all[i-1]
				for ; i < chunk; i += 3 {
					all[i], all[i+1], all[i+2] = r, g, bl
				}
			}
			continue
		}
		shift = 0
		if i >= len(d.pix.pix) {
			d.pix.extend(min(rowEnd, i+3*4096))
		}
		e := p[3]
		o := d.pix.pix[i : i+3 : i+3]
		o[0] = (float32(p[0]) + 0.5) * d.mul[0][e]
		o[1] = (float32(p[1]) + 0.5) * d.mul[1][e]
		o[2] = (float32(p[2]) + 0.5) * d.mul[2][e]
		i += 3
	}
	return nil
}

func decodeImage(r io.Reader) (image.Image, error) {
	m, _, err := DecodeRGBE(r)
	if err != nil {
		return nil, err
	}
	return m, nil
}

func decodeImageConfig(r io.Reader) (image.Config, error) {
	info, err := DecodeRGBEConfig(r)
	if err != nil {
		return image.Config{}, err
	}
	return image.Config{ColorModel: RGBFModel, Width: info.Width, Height: info.Height}, nil
}

func init() {
	image.RegisterFormat("hdr", "#?", decodeImage, decodeImageConfig)
}
