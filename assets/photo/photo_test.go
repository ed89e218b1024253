package photo

import (
	"bytes"
	"encoding/binary"
	"errors"
	"hash/crc32"
	"image"
	"image/color"
	"image/jpeg"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"golang.org/x/image/tiff"
)

// iecDecode is the sRGB decoding of IEC 61966-2-1:1999, written out here
// independently of render/colour: V <= 0.04045 -> V/12.92, else
// ((V+0.055)/1.055)^2.4.
func iecDecode(v float64) float64 {
	if v <= 0.04045 {
		return v / 12.92
	}
	return math.Pow((v+0.055)/1.055, 2.4)
}

func writePNG(t *testing.T, img image.Image) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), "p.png")
	var buf bytes.Buffer
	if err := png.Encode(&buf, img); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(p, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// Every 8-bit code value decodes to the IEC 61966-2-1 formula, in every
// channel, including the knee 0.04045 (between codes 10 and 11).
func TestSRGB8MatchesIEC61966(t *testing.T) {
	img := image.NewNRGBA(image.Rect(0, 0, 256, 1))
	for c := 0; c < 256; c++ {
		img.SetNRGBA(c, 0, color.NRGBA{uint8(c), uint8(255 - c), uint8(c), 255})
	}
	m, err := Load(writePNG(t, img), Decoding{Encoding: "srgb"})
	if err != nil {
		t.Fatal(err)
	}
	for c := 0; c < 256; c++ {
		r, g, b := m.RGB(c, 0)
		want := []float64{iecDecode(float64(c) / 255), iecDecode(float64(255-c) / 255), iecDecode(float64(c) / 255)}
		for k, got := range []float32{r, g, b} {
			if math.Abs(float64(got)-want[k]) > 1e-7 {
				t.Fatalf("code %d channel %d: %v, IEC 61966-2-1 gives %v", c, k, got, want[k])
			}
		}
	}
	// Worked value: code 128 (0.50196) decodes to 0.21586 (computed from the
	// IEC formula by hand: ((0.50196+0.055)/1.055)^2.4).
	if r, _, _ := m.RGB(128, 0); math.Abs(float64(r)-0.2158605) > 1e-6 {
		t.Errorf("code 128 -> %v", r)
	}
}

// 16-bit sRGB: codes around the knee and across the range follow the IEC
// formula at full 16-bit resolution.
func TestSRGB16MatchesIEC61966(t *testing.T) {
	codes := []uint16{0, 1, 2650, 2651, 2652, 2653, 10000, 32768, 50000, 65534, 65535}
	img := image.NewRGBA64(image.Rect(0, 0, len(codes), 1))
	for i, c := range codes {
		img.SetRGBA64(i, 0, color.RGBA64{c, c, c, 0xffff})
	}
	m, err := Load(writePNG(t, img), Decoding{})
	if err != nil {
		t.Fatal(err)
	}
	for i, c := range codes {
		r, _, _ := m.RGB(i, 0)
		want := iecDecode(float64(c) / 65535)
		if math.Abs(float64(r)-want) > 2e-7*math.Max(1, want) {
			t.Errorf("code %d: %v, IEC 61966-2-1 gives %v", c, r, want)
		}
	}
}

func TestLinearLevelsExposure(t *testing.T) {
	img := image.NewGray16(image.Rect(0, 0, 3, 1))
	img.SetGray16(0, 0, color.Gray16{Y: 0})
	img.SetGray16(1, 0, color.Gray16{Y: 32768})
	img.SetGray16(2, 0, color.Gray16{Y: 65535})
	d := Decoding{Encoding: "linear", BlackLevel: 0.1, WhiteLevel: 0.9, Exposure: 3}
	m, err := Convert(img, d)
	if err != nil {
		t.Fatal(err)
	}
	for i, c := range []float64{0, 32768, 65535} {
		want := (c/65535 - 0.1) / 0.8 * 3 // unclamped, by the package's definition
		r, g, b := m.RGB(i, 0)
		if math.Abs(float64(r)-want) > 1e-6 || r != g || g != b {
			t.Errorf("pixel %d: %v %v %v, want %v", i, r, g, b, want)
		}
	}
	// White level 0.9 with the default threshold: saturated from
	// 0.98*0.9 = 0.882 of full scale, so 65535 is, 32768 is not.
	if m.Saturated[0] || m.Saturated[1] || !m.Saturated[2] {
		t.Errorf("saturation %v", m.Saturated)
	}
}

// The saturation rule: a channel at or above 98% of full scale. For 8 bits
// 0.98*255 = 249.9, so code 250 is the first saturated code.
func TestSaturationThreshold8(t *testing.T) {
	img := image.NewNRGBA(image.Rect(0, 0, 4, 1))
	img.SetNRGBA(0, 0, color.NRGBA{249, 249, 249, 255})
	img.SetNRGBA(1, 0, color.NRGBA{0, 250, 0, 255})
	img.SetNRGBA(2, 0, color.NRGBA{0, 0, 255, 255})
	img.SetNRGBA(3, 0, color.NRGBA{10, 20, 30, 255})
	m, err := Convert(img, Decoding{})
	if err != nil {
		t.Fatal(err)
	}
	want := []bool{false, true, true, false}
	for i := range want {
		if m.Saturated[i] != want[i] {
			t.Errorf("pixel %d saturated = %v, want %v", i, m.Saturated[i], want[i])
		}
	}
	tb := newTable(Decoding{Encoding: "srgb", WhiteLevel: 1, Exposure: 1, SaturationThreshold: 0.98}, 16)
	// 0.98*65535 = 64224.3 -> 64225.
	if tb.satCode != 64225 {
		t.Errorf("16-bit saturation code %d, want 64225", tb.satCode)
	}
}

// opaque hides an image's concrete type, so Convert takes its generic
// path through image/color's conversions: an independent computation to
// compare every fast path with.
type opaque struct{ image.Image }

func testImages() map[string]image.Image {
	r := image.Rect(0, 0, 37, 23)
	out := map[string]image.Image{}
	rgba, nrgba := image.NewRGBA(r), image.NewNRGBA(r)
	rgba64, nrgba64 := image.NewRGBA64(r), image.NewNRGBA64(r)
	gray, gray16 := image.NewGray(r), image.NewGray16(r)
	pal := image.NewPaletted(r, color.Palette{color.Black, color.White, color.NRGBA{200, 40, 30, 255}, color.NRGBA{20, 140, 230, 255}})
	for y := 0; y < r.Dy(); y++ {
		for x := 0; x < r.Dx(); x++ {
			v := uint8(x*7 + y*11)
			w := uint16(x*1777 + y*2903)
			rgba.SetRGBA(x, y, color.RGBA{v, v / 2, 255 - v, 255})
			nrgba.SetNRGBA(x, y, color.NRGBA{v, 255 - v, v / 3, uint8(128 + x*3)})
			rgba64.SetRGBA64(x, y, color.RGBA64{w, w / 2, 65535 - w, 0xffff})
			nrgba64.SetNRGBA64(x, y, color.NRGBA64{w, 65535 - w, w / 3, uint16(32768 + y*1000)})
			gray.SetGray(x, y, color.Gray{v})
			gray16.SetGray16(x, y, color.Gray16{w})
			pal.SetColorIndex(x, y, uint8((x+y)%4))
		}
	}
	out["RGBA"], out["NRGBA"], out["RGBA64"], out["NRGBA64"] = rgba, nrgba, rgba64, nrgba64
	out["Gray"], out["Gray16"], out["Paletted"] = gray, gray16, pal
	for _, sr := range []image.YCbCrSubsampleRatio{image.YCbCrSubsampleRatio444, image.YCbCrSubsampleRatio422, image.YCbCrSubsampleRatio420,
		image.YCbCrSubsampleRatio440, image.YCbCrSubsampleRatio411, image.YCbCrSubsampleRatio410} {
		yc := image.NewYCbCr(r, sr)
		for i := range yc.Y {
			yc.Y[i] = uint8(i * 13)
		}
		for i := range yc.Cb {
			yc.Cb[i], yc.Cr[i] = uint8(i*5+60), uint8(200-i*3)
		}
		out["YCbCr"+sr.String()] = yc
		out["YCbCr sub-image "+sr.String()] = yc.SubImage(image.Rect(3, 1, 30, 20))
	}
	// A sub-image, so offsets are exercised.
	out["NRGBA sub-image"] = nrgba.SubImage(image.Rect(3, 2, 30, 20))
	return out
}

func TestFastPathsMatchGenericConversion(t *testing.T) {
	for name, img := range testImages() {
		for _, enc := range []string{"srgb", "linear"} {
			d := Decoding{Encoding: enc, Exposure: 1.5}
			fast, err := Convert(img, d)
			if err != nil {
				t.Fatal(name, err)
			}
			slow, err := Convert(opaque{img}, d)
			if err != nil {
				t.Fatal(name, err)
			}
			// 8-bit paths and the 16-bit generic path agree to float32
			// rounding; YCbCr differs by image/color's higher-precision
			// conversion in At (up to one 8-bit code).
			// The generic path premultiplies and divides again, which
			// rounds for alpha images (alpha >= 1/2 here keeps it small).
			tol := 1e-6
			switch {
			case strings.HasPrefix(name, "YCbCr"):
				tol = 0.02 // one 8-bit code near white, times the exposure 1.5
			case strings.HasPrefix(name, "N"):
				tol = 1e-3
			}
			for i := range fast.Pix {
				if d := math.Abs(float64(fast.Pix[i] - slow.Pix[i])); d > tol {
					t.Fatalf("%s %s: sample %d fast %v generic %v", name, enc, i, fast.Pix[i], slow.Pix[i])
				}
			}
		}
	}
}

// Premultiplied colours are divided by alpha ("alpha is ignored").
func TestPremultipliedAlphaIgnored(t *testing.T) {
	img := image.NewRGBA(image.Rect(0, 0, 2, 1))
	img.SetRGBA(0, 0, color.RGBA{64, 32, 0, 128}) // = NRGBA{127.5, 63.75, 0, 128}
	img.SetRGBA(1, 0, color.RGBA{0, 0, 0, 0})
	m, err := Convert(img, Decoding{Encoding: "linear"})
	if err != nil {
		t.Fatal(err)
	}
	r, g, b := m.RGB(0, 0)
	if math.Abs(float64(r)-128.0/255) > 1e-6 || math.Abs(float64(g)-64.0/255) > 1e-6 || b != 0 {
		t.Errorf("unpremultiplied %v %v %v", r, g, b)
	}
}

// pngWithSize builds a PNG whose header declares w x h pixels, with a
// valid CRC, and a token data stream.
func pngWithSize(w, h uint32) []byte {
	var buf bytes.Buffer
	buf.WriteString("\x89PNG\r\n\x1a\n")
	chunk := func(typ string, data []byte) {
		binary.Write(&buf, binary.BigEndian, uint32(len(data)))
		crc := crc32.NewIEEE()
		crc.Write([]byte(typ))
		crc.Write(data)
		buf.WriteString(typ)
		buf.Write(data)
		binary.Write(&buf, binary.BigEndian, crc.Sum32())
	}
	ihdr := make([]byte, 13)
	binary.BigEndian.PutUint32(ihdr[0:], w)
	binary.BigEndian.PutUint32(ihdr[4:], h)
	ihdr[8], ihdr[9] = 8, 2 // 8-bit RGB
	chunk("IHDR", ihdr)
	chunk("IDAT", []byte{0x78, 0x9c, 0x03, 0x00, 0x00, 0x00, 0x00, 0x01})
	chunk("IEND", nil)
	return buf.Bytes()
}

func TestRefusesHugeImageBeforeDecoding(t *testing.T) {
	p := filepath.Join(t.TempDir(), "huge.png")
	os.WriteFile(p, pngWithSize(60000, 60000), 0o644)
	_, err := Load(p, Decoding{})
	var le *LimitError
	if !errors.As(err, &le) || le.Width != 60000 {
		t.Fatalf("got %v, want a LimitError", err)
	}
	_, err = Inspect(p)
	if !errors.As(err, &le) {
		t.Fatalf("Inspect: %v", err)
	}
}

func TestBadFiles(t *testing.T) {
	dir := t.TempDir()
	good := writePNG(t, image.NewNRGBA(image.Rect(0, 0, 40, 30)))
	data, _ := os.ReadFile(good)
	cases := []struct {
		name string
		data []byte
		as   any
		want string
	}{
		{"empty.png", nil, new(*FormatError), "empty"},
		{"text.png", []byte("hello, not an image"), new(*FormatError), "not a PNG, JPEG or TIFF"},
		{"truncated.png", data[:len(data)/2], new(*FormatError), "truncated PNG"},
		{"badcrc.png", append(append([]byte{}, data[:20]...), append([]byte{data[20] ^ 0xff}, data[21:]...)...), new(*FormatError), "invalid photo"},
		{"tiny-tiff.tif", []byte("II*\x00\x08\x00\x00\x00\x00\x00"), new(*FormatError), "TIFF"},
	}
	for _, c := range cases {
		p := filepath.Join(dir, c.name)
		os.WriteFile(p, c.data, 0o644)
		_, err := Load(p, Decoding{})
		if err == nil {
			t.Errorf("%s: no error", c.name)
			continue
		}
		if !errors.As(err, c.as) {
			t.Errorf("%s: error %T %v", c.name, err, err)
		}
		if !bytes.Contains([]byte(err.Error()), []byte(c.want)) || !bytes.Contains([]byte(err.Error()), []byte(c.name)) {
			t.Errorf("%s: %q does not name the file and say %q", c.name, err, c.want)
		}
	}
}

func TestLoadMask(t *testing.T) {
	img := image.NewGray(image.Rect(0, 0, 4, 2))
	img.Pix = []uint8{0, 127, 128, 255, 255, 0, 200, 10}
	p := writePNG(t, img)
	m, err := LoadMask(p, 4, 2)
	if err != nil {
		t.Fatal(err)
	}
	want := []bool{false, false, true, true, true, false, true, false}
	for i := range want {
		if m[i] != want[i] {
			t.Errorf("mask %v, want %v", m, want)
			break
		}
	}
	if _, err := LoadMask(p, 5, 2); err == nil {
		t.Error("size mismatch not reported")
	}
}

func TestDecodingValidation(t *testing.T) {
	img := image.NewGray(image.Rect(0, 0, 1, 1))
	for _, d := range []Decoding{{Encoding: "gamma"}, {BlackLevel: 0.5, WhiteLevel: 0.4}, {Exposure: -1}, {Exposure: math.NaN()}} {
		if _, err := Convert(img, d); err == nil {
			t.Errorf("%+v accepted", d)
		}
	}
}

func BenchmarkConvert(b *testing.B) {
	r := image.Rect(0, 0, 2000, 1500)
	for _, c := range []struct {
		name string
		img  image.Image
	}{
		{"NRGBA", image.NewNRGBA(r)},
		{"RGBA64", image.NewRGBA64(r)},
		{"YCbCr420", image.NewYCbCr(r, image.YCbCrSubsampleRatio420)},
	} {
		b.Run(c.name, func(b *testing.B) {
			b.ReportAllocs()
			b.SetBytes(int64(r.Dx() * r.Dy()))
			for b.Loop() {
				if _, err := Convert(c.img, Decoding{}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// The too-short-for-its-header check must accept real files at their best
// compression: uniform images encoded by image/png (best compression) and
// image/jpeg.
func TestUniformImagesPassSizeCheck(t *testing.T) {
	r := image.Rect(0, 0, 3000, 2000)
	grey := image.NewGray16(r)
	var buf bytes.Buffer
	enc := png.Encoder{CompressionLevel: png.BestCompression}
	if err := enc.Encode(&buf, grey); err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	p := filepath.Join(dir, "flat.png")
	os.WriteFile(p, buf.Bytes(), 0o644)
	if _, err := Inspect(p); err != nil {
		t.Errorf("uniform 16-bit PNG of %d bytes refused: %v", buf.Len(), err)
	}
	buf.Reset()
	if err := jpeg.Encode(&buf, image.NewGray(r), &jpeg.Options{Quality: 10}); err != nil {
		t.Fatal(err)
	}
	p = filepath.Join(dir, "flat.jpg")
	os.WriteFile(p, buf.Bytes(), 0o644)
	if _, err := Inspect(p); err != nil {
		t.Errorf("uniform JPEG of %d bytes refused: %v", buf.Len(), err)
	}
	buf.Reset()
	if err := tiff.Encode(&buf, image.NewRGBA64(r), &tiff.Options{Compression: tiff.Deflate, Predictor: true}); err != nil {
		t.Fatal(err)
	}
	p = filepath.Join(dir, "flat.tif")
	os.WriteFile(p, buf.Bytes(), 0o644)
	if _, err := Inspect(p); err != nil {
		t.Errorf("uniform TIFF of %d bytes refused: %v", buf.Len(), err)
	}
}

// BenchmarkLoadPNG16 decodes a 2000x1500 16-bit RGB PNG file end to end
// (image/png's inflate and filtering dominate; the conversion is the rest).
func BenchmarkLoadPNG16(b *testing.B) {
	r := image.Rect(0, 0, 2000, 1500)
	img := image.NewRGBA64(r)
	for i := range img.Pix {
		img.Pix[i] = uint8(i * 7 % 251)
	}
	var buf bytes.Buffer
	if err := (&png.Encoder{CompressionLevel: png.BestSpeed}).Encode(&buf, img); err != nil {
		b.Fatal(err)
	}
	p := filepath.Join(b.TempDir(), "b.png")
	os.WriteFile(p, buf.Bytes(), 0o644)
	b.ReportAllocs()
	b.SetBytes(int64(r.Dx() * r.Dy()))
	for b.Loop() {
		if _, err := Load(p, Decoding{Encoding: "linear"}); err != nil {
			b.Fatal(err)
		}
	}
}
