package hdr

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// fuzzMaxPixels bounds the images the fuzz targets decode. The decoders'
// allocation follows the input's length, except that old-style RGBE runs
// can repeat a pixel up to the whole image from a few bytes; a lower limit
// than MaxPixels keeps each execution fast. The limit logic itself is the
// same code path.
const fuzzMaxPixels = 1 << 18

func addFiles(f *testing.F, patterns ...string) {
	for _, p := range patterns {
		names, _ := filepath.Glob(p)
		for _, n := range names {
			if b, err := os.ReadFile(n); err == nil {
				f.Add(b)
			}
		}
	}
}

func FuzzDecodeRGBE(f *testing.F) {
	addFiles(f, filepath.Join(fixtureDir, "*.hdr"), filepath.Join(badDir, "hdr-*.hdr"))
	for _, sz := range [][2]int{{1, 1}, {5, 2}, {9, 3}, {130, 2}} {
		var b bytes.Buffer
		if err := EncodeRGBE(&b, testImage(sz[0], sz[1], 1)); err != nil {
			f.Fatal(err)
		}
		f.Add(b.Bytes())
	}
	f.Add(rgbeFile("#?RGBE\nEXPOSURE=2\nCOLORCORR=1 1 2\nFORMAT=32-bit_rle_rgbe\n\n", 300, 1,
		[]byte{100, 50, 25, 130, 1, 1, 1, 3, 200, 0, 7, 120, 1, 1, 1, 1, 1, 1, 1, 1, 128, 128, 128, 140, 1, 1, 1, 37}))
	f.Fuzz(func(t *testing.T, data []byte) {
		m, info, err := decodeRGBE(bytes.NewReader(data), fuzzMaxPixels)
		if err != nil {
			if m != nil || info != nil {
				t.Fatal("results beside an error")
			}
			// Both paths report the same error.
			if _, _, err2 := decodeRGBEWith(bytes.NewReader(data), fuzzMaxPixels, false); err2 == nil || err2.Error() != err.Error() {
				t.Fatalf("fast path: %v\ncareful path: %v", err, err2)
			}
			return
		}
		if m.Width != info.Width || m.Height != info.Height || m.Width*m.Height > fuzzMaxPixels ||
			len(m.Pix) != 3*m.Width*m.Height {
			t.Fatalf("inconsistent image %dx%d, %d floats", m.Width, m.Height, len(m.Pix))
		}
		// The careful run-length path agrees with the fast one.
		slow, _, err := decodeRGBEWith(bytes.NewReader(data), fuzzMaxPixels, false)
		if err != nil {
			t.Fatalf("careful path fails where the fast one succeeded: %v", err)
		}
		for i := range slow.Pix {
			if math.Float32bits(slow.Pix[i]) != math.Float32bits(m.Pix[i]) {
				t.Fatalf("paths disagree at float %d: %v, %v", i, slow.Pix[i], m.Pix[i])
			}
		}
		cfg, err := readRGBEHeader(newByteReader(bytes.NewReader(data)), fuzzMaxPixels)
		if err != nil || cfg.Width != m.Width || cfg.Height != m.Height {
			t.Fatalf("header alone: %v", err)
		}
		// What Patina writes it reads back, and a second round trip changes
		// nothing (decoded values sit mid-step).
		var a, b bytes.Buffer
		if err := EncodeRGBE(&a, m); err != nil {
			t.Fatal(err)
		}
		m2, _, err := DecodeRGBE(bytes.NewReader(a.Bytes()))
		if err != nil {
			t.Fatalf("cannot read back: %v", err)
		}
		if err := EncodeRGBE(&b, m2); err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(a.Bytes(), b.Bytes()) {
			t.Fatal("second round trip changed the file")
		}
	})
}

func FuzzDecodePFM(f *testing.F) {
	addFiles(f, filepath.Join(fixtureDir, "*.pfm"), filepath.Join(badDir, "hdr-*.pfm"))
	for _, opt := range []PFMOptions{{}, {BigEndian: true}, {Grey: true}, {Grey: true, BigEndian: true}} {
		var b bytes.Buffer
		if err := EncodePFMWith(&b, testImage(3, 2, 2), opt); err != nil {
			f.Fatal(err)
		}
		f.Add(b.Bytes())
	}
	f.Add([]byte("PF 1\t1\r\n-4.0 \x00\x00\x80\x3f\x00\x00\x00\x40\x00\x00\x40\x40"))
	f.Fuzz(func(t *testing.T, data []byte) {
		m, info, err := decodePFM(bytes.NewReader(data), fuzzMaxPixels)
		if err != nil {
			if m != nil || info != nil {
				t.Fatal("results beside an error")
			}
			return
		}
		if m.Width != info.Width || m.Height != info.Height || m.Width*m.Height > fuzzMaxPixels ||
			len(m.Pix) != 3*m.Width*m.Height {
			t.Fatalf("inconsistent image %dx%d, %d floats", m.Width, m.Height, len(m.Pix))
		}
		// Re-encoding with the same channels and byte order reproduces the
		// input's sample bytes exactly (PFM stores float32 as is).
		var b bytes.Buffer
		if err := EncodePFMWith(&b, m, PFMOptions{Grey: info.Channels == 1, BigEndian: !info.LittleEndian}); err != nil {
			t.Fatal(err)
		}
		n := 4 * info.Channels * m.Width * m.Height
		in := data[info.DataOffset : info.DataOffset+int64(n)]
		out := b.Bytes()[b.Len()-n:]
		if !bytes.Equal(in, out) {
			t.Fatal("re-encoded samples differ from the input's")
		}
	})
}
