package hdr

import (
	"bytes"
	"errors"
	"fmt"
	"image"
	"math"
	"strings"
	"testing"
)

// TestFloatToRGBEWorkedValues checks the encoding against values worked by
// hand from the definition in Ward, "Real pixels" (Graphics Gems II): the
// exponent byte is e + 128 where the brightest channel is f 2^e, f in
// [0.5, 1), and each mantissa is floor(c 2^(8-e)).
func TestFloatToRGBEWorkedValues(t *testing.T) {
	for _, c := range []struct {
		r, g, b float32
		want    [4]byte
	}{
		{1, 0, 0, [4]byte{128, 0, 0, 129}},            // 1 = 0.5 * 2^1
		{0.5, 0.25, 0.125, [4]byte{128, 64, 32, 128}}, // 0.5 = 0.5 * 2^0
		{0.75, 0.75, 0.75, [4]byte{192, 192, 192, 128}},
		{255.0 / 256, 0, 0, [4]byte{255, 0, 0, 128}},
		{3, 1, 0.9, [4]byte{192, 64, 57, 130}}, // 0.9*64 = 57.6 -> 57 (truncation)
		{0, 0, 0, [4]byte{}},
		{1e-33, 0, 0, [4]byte{}},                                      // below 1e-32 is black
		{-1, float32(math.NaN()), 2, [4]byte{0, 0, 128, 130}},         // negative and NaN write 0
		{float32(math.Inf(1)), 0x1p127, 0, [4]byte{255, 255, 0, 255}}, // 2^127 would need mantissa 256: saturates,
	} {
		if got := floatToRGBE(c.r, c.g, c.b); got != c.want {
			t.Errorf("floatToRGBE(%g, %g, %g) = %v, want %v", c.r, c.g, c.b, got, c.want)
		}
	}
}

func encodeRGBE(t *testing.T, m *Image) []byte {
	t.Helper()
	var buf bytes.Buffer
	if err := EncodeRGBE(&buf, m); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

func decodeRGBEBytes(t *testing.T, data []byte) (*Image, *RGBEInfo) {
	t.Helper()
	m, info, err := DecodeRGBE(bytes.NewReader(data))
	if err != nil {
		t.Fatal(err)
	}
	return m, info
}

// TestRGBERoundTrip writes and reads back images of widths that give flat
// scanlines (below 8 and above 32767) and new-style run-length ones, and
// checks the documented convention exactly: truncation on write and
// (m + 0.5) 2^(e-136) on read (Radiance's setcolr and colr_color).
func TestRGBERoundTrip(t *testing.T) {
	for _, sz := range [][2]int{{1, 1}, {5, 3}, {7, 2}, {8, 2}, {64, 5}, {300, 3}, {32767, 1}, {32768, 2}} {
		m := testImage(sz[0], sz[1], uint64(sz[0]))
		data := encodeRGBE(t, m)
		got, info := decodeRGBEBytes(t, data)
		if got.Width != sz[0] || got.Height != sz[1] || info.ProgramType != "RADIANCE" || info.Format != "32-bit_rle_rgbe" {
			t.Fatalf("%dx%d: decoded %dx%d, info %+v", sz[0], sz[1], got.Width, got.Height, info)
		}
		body := data[info.DataOffset:]
		rle := sz[0] >= 8 && sz[0] <= 32767
		if isRLE := body[0] == 2 && body[1] == 2; isRLE != rle {
			t.Errorf("width %d: new-style run-length = %v, want %v", sz[0], isRLE, rle)
		}
		if !rle && len(body) != 4*sz[0]*sz[1] {
			t.Errorf("width %d: flat data is %d bytes, want %d", sz[0], len(body), 4*sz[0]*sz[1])
		}
		for i := 0; i < sz[0]*sz[1]; i++ {
			x := m.Pix[3*i : 3*i+3]
			s := rgbeStep(x[0], x[1], x[2])
			for c := 0; c < 3; c++ {
				want := 0.0
				if s > 0 {
					want = (math.Floor(float64(x[c])/s) + 0.5) * s
				}
				if g := float64(got.Pix[3*i+c]); g != want {
					t.Fatalf("%dx%d pixel %d channel %d: wrote %g, read %g, want %g", sz[0], sz[1], i, c, x[c], g, want)
				}
				if s > 0 && math.Abs(float64(got.Pix[3*i+c])-float64(x[c])) > s/2 {
					t.Fatalf("pixel %d channel %d: error beyond half a step", i, c)
				}
			}
		}
		// Re-encoding what was read gives the same bytes: decoded values sit
		// in the middle of their step, so truncation returns the same mantissa.
		if again := encodeRGBE(t, got); !bytes.Equal(again, data) {
			t.Errorf("%dx%d: re-encoding the decoded image changed the file", sz[0], sz[1])
		}
	}
}

// TestRLECompresses checks that constant rows are stored as runs (4 codes
// of 2 bytes per 127 pixels, plus the 4-byte scanline header).
func TestRLECompresses(t *testing.T) {
	m := NewImage(254, 3)
	for i := range m.Pix {
		m.Pix[i] = 0.5
	}
	data := encodeRGBE(t, m)
	_, info := decodeRGBEBytes(t, data)
	if n := len(data) - int(info.DataOffset); n != 3*(4+4*2*2) {
		t.Errorf("constant 254x3 image: %d data bytes, want %d", n, 3*(4+4*2*2))
	}
}

func rgbeFile(header string, w, h int, body ...[]byte) []byte {
	var b bytes.Buffer
	b.WriteString(header)
	fmt.Fprintf(&b, "-Y %d +X %d\n", h, w)
	for _, p := range body {
		b.Write(p)
	}
	return b.Bytes()
}

const stdHeader = "#?RADIANCE\nFORMAT=32-bit_rle_rgbe\n\n"

// val is the Radiance decoding of one mantissa (colr_color in Radiance's
// color.c: (m + 0.5) 2^(e-136)), written out for the hand-built files below.
func val(m, e int) float32 { return float32((float64(m) + 0.5) * math.Ldexp(1, e-136)) }

// TestOldStyleRuns decodes a hand-built file with old-style runs as the
// Radiance file format notes and oldreadcolrs describe them: a pixel
// 1, 1, 1, n repeats the previous pixel n times, and each directly
// following run pixel shifts its count 8 bits further left.
func TestOldStyleRuns(t *testing.T) {
	// Width 300, one scanline: pixel A, run of 3 (A x3 more), pixel B,
	// run 1 then run 1 (<<8: 256 more), then 38 pixels... total must be 300:
	// 1 + 3 + 1 + 1 + 256 = 262, then a run of 38 starts a new run sequence
	// only after a literal, so add pixel C and a run of 37: 262 + 1 + 37 = 300.
	A, B, C := []byte{100, 50, 25, 130}, []byte{200, 0, 7, 120}, []byte{128, 128, 128, 140}
	body := bytes.Join([][]byte{A, {1, 1, 1, 3}, B, {1, 1, 1, 1}, {1, 1, 1, 1}, C, {1, 1, 1, 37}}, nil)
	m, _ := decodeRGBEBytes(t, rgbeFile(stdHeader, 300, 1, body))
	want := func(p []byte) [3]float32 {
		return [3]float32{val(int(p[0]), int(p[3])), val(int(p[1]), int(p[3])), val(int(p[2]), int(p[3]))}
	}
	var exp [][3]float32
	for i := 0; i < 4; i++ {
		exp = append(exp, want(A))
	}
	for i := 0; i < 1+1+256; i++ {
		exp = append(exp, want(B))
	}
	for i := 0; i < 38; i++ {
		exp = append(exp, want(C))
	}
	for x := 0; x < 300; x++ {
		r, g, b := m.RGB(x, 0)
		if [3]float32{r, g, b} != exp[x] {
			t.Fatalf("x = %d: got %v %v %v, want %v", x, r, g, b, exp[x])
		}
	}
	// A run at the start of a scanline repeats the last pixel of the
	// scanline before.
	m, _ = decodeRGBEBytes(t, rgbeFile(stdHeader, 2, 2, A, B, []byte{1, 1, 1, 2}))
	if r, _, _ := m.RGB(1, 1); r != val(200, 120) {
		t.Errorf("run at the start of scanline 1: got %v, want %v", r, val(200, 120))
	}
}

// TestMixedScanlines decodes a file in which flat and new-style scanlines
// alternate, which Radiance's reader allows (each scanline is tested for the
// 2, 2 header on its own), and checks literal and run codes of every length
// class against the byte values written by hand.
func TestMixedScanlines(t *testing.T) {
	const w = 10
	var flat []byte
	for x := 0; x < w; x++ {
		flat = append(flat, byte(10+x), byte(20+x), byte(30+x), 128)
	}
	rle := []byte{2, 2, 0, w,
		10, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, // red: 10 literals
		128 + 10, 99, // green: run of 10
		3, 7, 8, 9, 128 + 7, 11, // blue: 3 literals, run of 7
		128 + 5, 129, 5, 129, 129, 129, 129, 129, // exponent: run of 5, 5 literals
	}
	m, _ := decodeRGBEBytes(t, rgbeFile(stdHeader, w, 3, flat, rle, flat))
	for x := 0; x < w; x++ {
		for _, y := range []int{0, 2} {
			r, g, b := m.RGB(x, y)
			if r != val(10+x, 128) || g != val(20+x, 128) || b != val(30+x, 128) {
				t.Fatalf("flat scanline %d x = %d: %v %v %v", y, x, r, g, b)
			}
		}
		r, g, b := m.RGB(x, 1)
		wb := 11
		if x < 3 {
			wb = 7 + x
		}
		if r != val(x+1, 129) || g != val(99, 129) || b != val(wb, 129) {
			t.Fatalf("run-length scanline x = %d: %v %v %v", x, r, g, b)
		}
	}
}

// TestHeaderVariants reads both first lines, comments, unknown variables,
// carriage returns, and applies EXPOSURE= and COLORCORR= by division, as the
// Radiance file format notes define them (the pixel values were multiplied
// by each exposure recorded).
func TestHeaderVariants(t *testing.T) {
	pix := []byte{128, 64, 192, 129} // (1.00390625, 0.50390625, 1.50390625) before exposure
	hdr := "#?RGBE\r\n# made by hand\nEXPOSURE=2\nCOLORCORR=1 2 4\nGAMMA=1.0\nEXPOSURE= 0.25\nPRIMARIES=0.640 0.330 0.300 0.600 0.150 0.060 0.3127 0.3290\nFORMAT=32-bit_rle_rgbe\r\n\n"
	m, info := decodeRGBEBytes(t, rgbeFile(hdr, 1, 1, pix))
	if info.ProgramType != "RGBE" || info.Exposure != 0.5 || info.ColorCorr != [3]float64{1, 2, 4} ||
		len(info.Comments) != 1 || len(info.Lines) != 7 || !strings.HasPrefix(info.Primaries, "0.640") {
		t.Fatalf("info %+v", info)
	}
	r, g, b := m.RGB(0, 0)
	if r != val(128, 129)/0.5 || g != val(64, 129)/(0.5*2) || b != val(192, 129)/(0.5*4) {
		t.Errorf("exposure and colour correction: got %v %v %v", r, g, b)
	}
}

// TestImageDecodeFindsHDR checks the image.RegisterFormat registration for
// both first lines, and the image.Image view.
func TestImageDecodeFindsHDR(t *testing.T) {
	for _, first := range []string{"#?RADIANCE", "#?RGBE"} {
		data := rgbeFile(first+"\nFORMAT=32-bit_rle_rgbe\n\n", 2, 1, []byte{128, 0, 0, 129, 0, 0, 0, 0})
		cfg, name, err := image.DecodeConfig(bytes.NewReader(data))
		if err != nil || name != "hdr" || cfg.Width != 2 || cfg.Height != 1 || cfg.ColorModel != RGBFModel {
			t.Fatalf("%s: DecodeConfig = %+v, %q, %v", first, cfg, name, err)
		}
		img, name, err := image.Decode(bytes.NewReader(data))
		if err != nil || name != "hdr" {
			t.Fatalf("%s: Decode: %q %v", first, name, err)
		}
		if img.Bounds() != image.Rect(0, 0, 2, 1) {
			t.Fatalf("bounds %v", img.Bounds())
		}
		// 1.0039 clamps to full scale; the zero-mantissa channels hold half
		// a step (e = 129: step 2^-7), 2^-8, which is 256 of 65535.
		r, g, _, a := img.At(0, 0).RGBA()
		if r != 0xffff || g != 256 || a != 0xffff {
			t.Errorf("At(0,0).RGBA() = %d %d, want 65535 256", r, g)
		}
		if c := img.At(1, 0).(RGBF); c != (RGBF{}) {
			t.Errorf("black pixel reads %v", c)
		}
	}
	// PFM registers too.
	var buf bytes.Buffer
	if err := EncodePFM(&buf, testImage(3, 2, 1)); err != nil {
		t.Fatal(err)
	}
	if _, name, err := image.Decode(&buf); err != nil || name != "pfm" {
		t.Errorf("PFM through image.Decode: %q %v", name, err)
	}
}

func TestRGBFModel(t *testing.T) {
	c := RGBFModel.Convert(RGBF{2, -1, 0.5}).(RGBF)
	if c != (RGBF{2, -1, 0.5}) {
		t.Errorf("RGBF converts to itself, got %v", c)
	}
	r, g, b, _ := c.RGBA()
	if r != 0xffff || g != 0 || b != 32768 {
		t.Errorf("clamped RGBA = %d %d %d", r, g, b)
	}
	if c := RGBFModel.Convert(image.White.C).(RGBF); c != (RGBF{1, 1, 1}) {
		t.Errorf("white converts to %v", c)
	}
}

// TestErrorsAreTyped checks that callers can tell a broken file from an
// unsupported one with errors.As.
func TestErrorsAreTyped(t *testing.T) {
	_, _, err := DecodeRGBE(strings.NewReader("#?RADIANCE\nFORMAT=32-bit_rle_rgbe\n\n+Y 2 +X 2\n"))
	var ue *UnsupportedError
	if !errors.As(err, &ue) || ue.Line != 4 {
		t.Errorf("bottom-to-top orientation: %v", err)
	}
	_, _, err = DecodeRGBE(strings.NewReader("#?RADIANCE\nFORMAT=32-bit_rle_rgbe\n\n-Y 2 +X 2\n\x80"))
	var fe *FormatError
	if !errors.As(err, &fe) || fe.Scanline != 0 || fe.Offset != 46 {
		t.Errorf("truncated data: %v", err)
	}
}

func TestCheckFinite(t *testing.T) {
	m := NewImage(3, 2)
	if err := m.CheckFinite(); err != nil {
		t.Fatal(err)
	}
	m.SetRGB(2, 1, 0, float32(math.Inf(-1)), 0)
	if err := m.CheckFinite(); err == nil || !strings.Contains(err.Error(), "pixel (2, 1) channel g") {
		t.Errorf("CheckFinite: %v", err)
	}
}

// TestRLEPathsAgree decodes the same files with and without the buffered
// fast path for run-length scanlines; the careful path is the one that
// follows Radiance's freadcolrs step by step.
func TestRLEPathsAgree(t *testing.T) {
	files := [][]byte{encodeRGBE(t, testImage(300, 20, 9)), encodeRGBE(t, testImage(4096, 3, 9))}
	// Zero-length literal codes are legal (Radiance skips them) and make the
	// fast path hand over to the careful one.
	files = append(files, rgbeFile(stdHeader, 8, 1, []byte{2, 2, 0, 8, 0, 128 + 8, 1, 0, 128 + 8, 2, 128 + 8, 3, 128 + 8, 129}))
	for k, data := range files {
		fast, _, err1 := decodeRGBEWith(bytes.NewReader(data), MaxPixels, true)
		slow, _, err2 := decodeRGBEWith(bytes.NewReader(data), MaxPixels, false)
		if err1 != nil || err2 != nil {
			t.Fatalf("file %d: %v / %v", k, err1, err2)
		}
		for i := range slow.Pix {
			if fast.Pix[i] != slow.Pix[i] {
				t.Fatalf("file %d float %d: fast %v, careful %v", k, i, fast.Pix[i], slow.Pix[i])
			}
		}
	}
	m, _ := decodeRGBEBytes(t, files[2])
	if r, g, b := m.RGB(5, 0); r != val(1, 129) || g != val(2, 129) || b != val(3, 129) {
		t.Errorf("zero-length literal file: %v %v %v", r, g, b)
	}
}

// TestFloatToRGBEMatchesSetcolr compares the bit-level encoder with
// Radiance's setcolr formula written out in float64 (frexp, then
// floor(c * 256 / 2^e)) over values spanning the whole RGBE range.
func TestFloatToRGBEMatchesSetcolr(t *testing.T) {
	ref := func(c [3]float32) [4]byte {
		v := max(float64(c[0]), float64(c[1]), float64(c[2]))
		if v <= 1e-32 {
			return [4]byte{}
		}
		_, e := math.Frexp(v)
		e = min(e, 127)
		var p [4]byte
		for i := range c {
			p[i] = byte(min(255, math.Floor(float64(c[i])*math.Ldexp(1, 8-e))))
		}
		p[3] = byte(e + 128)
		return p
	}
	var c [3]float32
	for i := 0; i < 50000; i++ {
		for k := range c {
			// log-uniform over 1e-34 .. 3e38
			c[k] = float32(math.Pow(10, -34+72.5*float64((i*7919+k*104729)%100003)/100003))
		}
		if got, want := floatToRGBE(c[0], c[1], c[2]), ref(c); got != want {
			t.Fatalf("%v: got %v, want %v", c, got, want)
		}
	}
}
