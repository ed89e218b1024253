package hdr

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"math"
)

// checkImage refuses an Image whose fields do not describe a pixel buffer.
func checkImage(m *Image) error {
	if m == nil {
		return errors.New("hdr: nil image")
	}
	if m.Width <= 0 || m.Height <= 0 {
		return fmt.Errorf("hdr: cannot write a %dx%d image, expected a width and height of at least 1", m.Width, m.Height)
	}
	if int64(m.Width)*int64(m.Height) > MaxPixels {
		return fmt.Errorf("hdr: cannot write a %dx%d image: more than hdr.MaxPixels = %d pixels, which no reader here would accept", m.Width, m.Height, MaxPixels)
	}
	if len(m.Pix) != 3*m.Width*m.Height {
		return fmt.Errorf("hdr: %dx%d image has %d floats in Pix, expected %d", m.Width, m.Height, len(m.Pix), 3*m.Width*m.Height)
	}
	return nil
}

// EncodeRGBE writes m as a Radiance RGBE file: header "#?RADIANCE",
// FORMAT=32-bit_rle_rgbe, resolution "-Y H +X W", then new-style run-length
// scanlines when 8 <= width <= 32767 and flat scanlines otherwise (as
// Radiance and OpenCV do). Mantissas are truncated (see the package
// documentation). Negative and NaN channels are written as 0, values below
// 1e-32 as black, and values of 2^127 or more (including +Inf) saturate at
// the largest RGBE value.
func EncodeRGBE(w io.Writer, m *Image) error {
	if err := checkImage(m); err != nil {
		return err
	}
	bw := bufio.NewWriterSize(w, 64<<10)
	fmt.Fprintf(bw, "#?RADIANCE\nSOFTWARE=Patina\nFORMAT=32-bit_rle_rgbe\n\n-Y %d +X %d\n", m.Height, m.Width)
	W := m.Width
	rle := W >= minRLEWidth && W <= maxRLEWidth
	row := make([]byte, 4*W)
	var planes, enc []byte
	if rle {
		planes = make([]byte, 4*W)
	}
	for y := 0; y < m.Height; y++ {
		src := m.Pix[3*y*W : 3*(y+1)*W]
		for x := 0; x < W; x++ {
			p := floatToRGBE(src[3*x], src[3*x+1], src[3*x+2])
			copy(row[4*x:4*x+4], p[:])
		}
		if !rle {
			if _, err := bw.Write(row); err != nil {
				return err
			}
			continue
		}
		for x := 0; x < W; x++ {
			for c := 0; c < 4; c++ {
				planes[c*W+x] = row[4*x+c]
			}
		}
		enc = append(enc[:0], 2, 2, byte(W>>8), byte(W))
		for c := 0; c < 4; c++ {
			enc = appendRLEPlane(enc, planes[c*W:(c+1)*W])
		}
		if _, err := bw.Write(enc); err != nil {
			return err
		}
	}
	return bw.Flush()
}

// floatToRGBE encodes one pixel the way Radiance's setcolr does: the
// brightest channel v = f 2^e with f in [0.5, 1) sets the exponent byte
// e + 128, and each channel's mantissa is floor(c 2^(8-e)). It reads e from
// the float32 exponent bits (v > 1e-32 is a normal number) and scales by an
// exact power of two, so the result equals frexp and floor in float64.
func floatToRGBE(r, g, b float32) [4]byte {
	if !(r > 0) { // negative or NaN
		r = 0
	}
	if !(g > 0) {
		g = 0
	}
	if !(b > 0) {
		b = 0
	}
	v := max(r, g, b)
	if !(v > 1e-32) {
		return [4]byte{}
	}
	e := 127 // values of 2^127 and more (+Inf too) would overflow the exponent byte: saturate
	if v < 0x1p127 {
		e = int(math.Float32bits(v)>>23&0xff) - 126
	}
	s := math.Float32frombits(uint32(8-e+127) << 23) // 2^(8-e), e in [-106, 127]
	return [4]byte{mantissa(r * s), mantissa(g * s), mantissa(b * s), byte(e + 128)}
}

func mantissa(x float32) byte {
	if x >= 255 {
		return 255
	}
	return byte(x) // truncation toward zero: floor, as x >= 0
}

// appendRLEPlane run-length encodes one channel of a scanline: runs of four
// or more equal bytes (up to 127) as 128+n, value; everything else as
// literal blocks of up to 128 bytes.
func appendRLEPlane(dst, p []byte) []byte {
	const minRun = 4 // a shorter run costs more than it saves (Radiance's MINRUN)
	n := len(p)
	for j := 0; j < n; {
		beg, run := j, 0
		for beg < n {
			run = 1
			for beg+run < n && run < 127 && p[beg+run] == p[beg] {
				run++
			}
			if run >= minRun {
				break
			}
			beg += run
		}
		for j < beg {
			k := min(128, beg-j)
			dst = append(dst, byte(k))
			dst = append(dst, p[j:j+k]...)
			j += k
		}
		if beg < n && run >= minRun {
			dst = append(dst, byte(128+run), p[beg])
			j = beg + run
		}
	}
	return dst
}
