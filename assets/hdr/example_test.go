package hdr_test

import (
	"bytes"
	"fmt"
	"image"

	"patina/assets/hdr"
)

// Example writes a small image as Radiance RGBE and reads it back, both
// directly and through image.Decode. The three channels share the exponent
// of the brightest, 12 = 0.75 * 2^4, so the step is 2^(4-8) = 1/16 for all
// of them: 0.3 is stored as mantissa floor(0.3 * 16) = 4 and read back as
// (4 + 0.5) / 16 = 0.28125, within half a step.
func Example() {
	m := hdr.NewImage(16, 2)
	m.SetRGB(3, 1, 0.3, 1.5, 12)
	var buf bytes.Buffer
	if err := hdr.EncodeRGBE(&buf, m); err != nil {
		panic(err)
	}
	back, info, err := hdr.DecodeRGBE(bytes.NewReader(buf.Bytes()))
	if err != nil {
		panic(err)
	}
	r, g, b := back.RGB(3, 1)
	fmt.Println(info.Width, info.Height, info.Format)
	fmt.Printf("%.6f %.6f %.6f\n", r, g, b)

	img, format, err := image.Decode(bytes.NewReader(buf.Bytes()))
	if err != nil {
		panic(err)
	}
	fmt.Println(format, img.Bounds().Dx(), img.At(3, 1).(hdr.RGBF).B)
	// Output:
	// 16 2 32-bit_rle_rgbe
	// 0.281250 1.531250 12.031250
	// hdr 16 12.03125
}
