// Package photo decodes the photographs of a capture into linear float32
// RGB, the form the fit compares with renders.
//
// Formats: PNG 8 and 16 bit (the W3C PNG specification,
// https://www.w3.org/TR/PNG/, through image/png), baseline and progressive
// JPEG (image/jpeg), and TIFF 8 and 16 bit (golang.org/x/image/tiff: strips
// or tiles, uncompressed, LZW, Deflate or PackBits). The format is chosen
// by the file's first bytes, not its name.
//
// # Decoding
//
// Each channel's code value c is normalised to v = c / (2^bits - 1). With
// black level b and white level w (normalised code values, defaults 0 and
// 1) the value is rescaled to u = (v - b) / (w - b), then decoded to linear
// light by the encoding: the sRGB curve of IEC 61966-2-1 (render/colour)
// for "srgb", the identity for "linear", and finally multiplied by the
// exposure multiplier. Values are not clamped: noise below the black level
// stays negative, so averages over many pixels stay unbiased.
//
// Greyscale images give r = g = b. Alpha is ignored: colours of
// non-premultiplied images (PNG with alpha) are taken as stored, and
// premultiplied ones (associated-alpha TIFF) are divided by alpha first. A
// photo's unusable pixels are marked with a mask file instead (LoadMask).
// Paletted images are looked up in their palette. CMYK JPEGs are refused:
// their conversion to RGB needs a colour profile Patina does not have.
//
// # Saturation
//
// A pixel is marked saturated when any channel's normalised code value v
// reaches SaturationThreshold x w (0.98 x white level by default), that is
// when it lies within 2% of the level at which the sensor or the encoder
// clips. Such pixels carry no reliable radiance and the fit leaves them out.
//
// # Limits
//
// Dimensions are read from the header (image.DecodeConfig) before any pixel
// memory is allocated, and images wider or taller than MaxDimension or with
// more than MaxPixels pixels are refused. Decoding needs about 20 bytes per
// pixel at the peak (the decoded 16-bit image and the float32 result).
package photo

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"image"
	"image/color"
	"image/jpeg"
	"image/png"
	"io"
	"os"

	"golang.org/x/image/tiff"
)

// Limits checked on the header before decoding.
const (
	// MaxPixels is the largest photo, in pixels, Patina decodes: 150
	// million, the size of the largest medium-format backs (about 3 GB at
	// the peak of decoding).
	MaxPixels = 150_000_000
	// MaxDimension is the largest width or height.
	MaxDimension = 65535
)

// maxPixels is MaxPixels, lowered by the fuzz test so that its inputs stay
// within the memory of a fuzzing worker.
var maxPixels int64 = MaxPixels

// DefaultSaturationThreshold is the fraction of the white level at or
// above which a channel counts as saturated.
const DefaultSaturationThreshold = 0.98

// Image is a decoded photo: linear RGB in the capture's radiance scale.
type Image struct {
	Width, Height int
	// Pix holds r, g, b per pixel, row-major, top row first: pixel (x, y)
	// starts at 3*(y*Width+x).
	Pix []float32
	// Saturated marks, per pixel (y*Width+x), that some channel reached the
	// saturation threshold.
	Saturated []bool
}

// RGB returns pixel (x, y).
func (m *Image) RGB(x, y int) (r, g, b float32) {
	i := 3 * (y*m.Width + x)
	p := m.Pix[i : i+3 : i+3]
	return p[0], p[1], p[2]
}

// Decoding says how to turn a photo's code values into linear radiance. The
// zero value decodes sRGB with black 0, white 1, exposure 1 and the default
// saturation threshold.
type Decoding struct {
	Encoding   string  // "srgb" (default when empty) or "linear"
	BlackLevel float64 // normalised code value; default 0
	WhiteLevel float64 // normalised code value; 0 means 1
	Exposure   float64 // multiplier to the capture's radiance scale; 0 means 1
	// SaturationThreshold is the fraction of WhiteLevel at or above which a
	// channel is saturated; 0 means DefaultSaturationThreshold.
	SaturationThreshold float64
}

func (d Decoding) normalised() (Decoding, error) {
	if d.Encoding == "" {
		d.Encoding = "srgb"
	}
	if d.WhiteLevel == 0 {
		d.WhiteLevel = 1
	}
	if d.Exposure == 0 {
		d.Exposure = 1
	}
	if d.SaturationThreshold == 0 {
		d.SaturationThreshold = DefaultSaturationThreshold
	}
	switch {
	case d.Encoding != "srgb" && d.Encoding != "linear":
		return d, fmt.Errorf("unknown encoding %q (want srgb or linear)", d.Encoding)
	case !(d.WhiteLevel > d.BlackLevel) || d.BlackLevel < 0:
		return d, fmt.Errorf("white level %v must be above black level %v >= 0", d.WhiteLevel, d.BlackLevel)
	case !(d.Exposure > 0) || d.Exposure > 1e30:
		return d, fmt.Errorf("exposure multiplier %v must be positive", d.Exposure)
	case !(d.SaturationThreshold > 0):
		return d, fmt.Errorf("saturation threshold %v must be positive", d.SaturationThreshold)
	}
	return d, nil
}

// FormatError reports a file that is not a valid image of a supported format.
type FormatError struct {
	File string
	Msg  string
	Err  error // the decoder's error, if any
}

func (e *FormatError) Error() string {
	s := e.File + ": invalid photo: " + e.Msg
	if e.Err != nil {
		s += ": " + e.Err.Error()
	}
	return s
}

func (e *FormatError) Unwrap() error { return e.Err }

// UnsupportedError reports a valid image that Patina does not decode.
type UnsupportedError struct {
	File string
	Msg  string
}

func (e *UnsupportedError) Error() string { return e.File + ": unsupported photo: " + e.Msg }

// LimitError reports an image beyond MaxPixels or MaxDimension.
type LimitError struct {
	File          string
	Width, Height int
}

func (e *LimitError) Error() string {
	return fmt.Sprintf("%s: the image header declares %dx%d pixels, beyond Patina's limit of %d pixels and %d per side", e.File, e.Width, e.Height, MaxPixels, MaxDimension)
}

// Info is what a photo's header says.
type Info struct {
	Width    int    `json:"width"`
	Height   int    `json:"height"`
	Format   string `json:"format"`    // "png", "jpeg" or "tiff"
	BitDepth int    `json:"bit_depth"` // 8 or 16 bits per channel
	Channels int    `json:"channels"`  // 1 (grey) or 3 (colour), not counting alpha
	Alpha    bool   `json:"alpha"`     // the file has an alpha channel (ignored by Load)
}

// sniff names the format from the first bytes.
func sniff(head []byte) string {
	switch {
	case bytes.HasPrefix(head, []byte("\x89PNG\r\n\x1a\n")):
		return "png"
	case bytes.HasPrefix(head, []byte("\xff\xd8\xff")):
		return "jpeg"
	case bytes.HasPrefix(head, []byte("II*\x00")), bytes.HasPrefix(head, []byte("MM\x00*")):
		return "tiff"
	}
	return ""
}

// open opens path and names its format.
func open(path string) (*os.File, string, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, "", err
	}
	st, err := f.Stat()
	if err != nil {
		f.Close()
		return nil, "", err
	}
	if !st.Mode().IsRegular() {
		f.Close()
		return nil, "", &FormatError{File: path, Msg: "not a regular file"}
	}
	head := make([]byte, 8)
	n, _ := io.ReadFull(f, head)
	format := sniff(head[:n])
	if format == "" {
		f.Close()
		if n == 0 {
			return nil, "", &FormatError{File: path, Msg: "the file is empty"}
		}
		return nil, "", &FormatError{File: path, Msg: fmt.Sprintf("not a PNG, JPEG or TIFF file (it starts with % x)", head[:n])}
	}
	if _, err := f.Seek(0, io.SeekStart); err != nil {
		f.Close()
		return nil, "", err
	}
	return f, format, nil
}

func decodeConfig(f *os.File, path, format string) (image.Config, error) {
	var cfg image.Config
	var err error
	r := bufio.NewReader(f)
	switch format {
	case "png":
		cfg, err = png.DecodeConfig(r)
	case "jpeg":
		cfg, err = jpeg.DecodeConfig(r)
	case "tiff":
		cfg, err = tiff.DecodeConfig(f)
	}
	if err != nil {
		if place := diagnose(f, format); place != "" {
			return cfg, &FormatError{File: path, Msg: place, Err: err}
		}
		return cfg, decodeError(path, format, err)
	}
	if cfg.Width <= 0 || cfg.Height <= 0 {
		return cfg, &FormatError{File: path, Msg: fmt.Sprintf("%s header declares %dx%d pixels", format, cfg.Width, cfg.Height)}
	}
	if cfg.Width > MaxDimension || cfg.Height > MaxDimension || int64(cfg.Width)*int64(cfg.Height) > maxPixels {
		return cfg, &LimitError{File: path, Width: cfg.Width, Height: cfg.Height}
	}
	if cfg.ColorModel == color.CMYKModel {
		return cfg, &UnsupportedError{File: path, Msg: "CMYK JPEG: export the photo as RGB (sRGB) instead"}
	}
	if msg := tooShort(f, format, cfg); msg != "" {
		return cfg, &FormatError{File: path, Msg: msg}
	}
	return cfg, nil
}

// Compression bounds used by tooShort. Deflate cannot compress better than
// 1032:1 (from memory: its longest match, 258 bytes, costs at least 2 bits).
// A JPEG spends at least one bit on every 8x8 block of every component in
// its first DC scan, so it holds at most 512 pixels per byte; the bound
// allows 4096, eight times more. TIFF's compressions are bounded by LZW's
// (about 1365:1 when the 4096-entry table fills with ever longer strings),
// deflate's and PackBits' (64:1); the bound allows 2048:1.
const (
	deflateMaxRatio   = 1032
	jpegPixelsPerByte = 4096
	tiffMaxRatio      = 2048
)

// tooShort refuses a PNG, JPEG or TIFF whose file is too small to hold the image
// its header declares, before the decoder allocates the whole image: a
// truncated or forged header then costs memory in proportion to the file,
// not to its claim.
func tooShort(f *os.File, format string, cfg image.Config) string {
	st, err := f.Stat()
	if err != nil {
		return ""
	}
	size := st.Size()
	pixels := int64(cfg.Width) * int64(cfg.Height)
	switch format {
	case "png":
		var ihdr [26]byte
		if _, err := f.ReadAt(ihdr[:], 0); err != nil {
			return ""
		}
		depth := int64(ihdr[24])
		channels := map[byte]int64{0: 1, 2: 3, 3: 1, 4: 2, 6: 4}[ihdr[25]]
		raw := int64(cfg.Height) * (1 + (int64(cfg.Width)*channels*depth+7)/8)
		if need := raw / deflateMaxRatio; size < need {
			return fmt.Sprintf("truncated PNG file: the header declares %dx%d pixels (%d bytes of image data), which cannot fit in %d bytes even at deflate's best compression", cfg.Width, cfg.Height, raw, size)
		}
	case "tiff":
		bits := int64(1) // bilevel grey or a small palette
		switch cfg.ColorModel {
		case color.Gray16Model:
			bits = 16
		case color.RGBAModel, color.NRGBAModel:
			bits = 24
		case color.RGBA64Model, color.NRGBA64Model:
			bits = 48
		}
		raw := pixels * bits / 8
		if need := raw / tiffMaxRatio; size < need {
			return fmt.Sprintf("truncated TIFF file: the header declares %dx%d pixels (at least %d bytes of image data), which cannot fit in %d bytes", cfg.Width, cfg.Height, raw, size)
		}
	case "jpeg":
		if need := pixels / jpegPixelsPerByte; size < need {
			return fmt.Sprintf("truncated JPEG file: the header declares %dx%d pixels, which cannot fit in %d bytes", cfg.Width, cfg.Height, size)
		}
	}
	return ""
}

// decodeError turns a decoder's error into a typed error naming the file.
func decodeError(path, format string, err error) error {
	var pu png.UnsupportedError
	var ju jpeg.UnsupportedError
	var tu tiff.UnsupportedError
	switch {
	case errors.As(err, &pu), errors.As(err, &ju), errors.As(err, &tu):
		return &UnsupportedError{File: path, Msg: err.Error()}
	case errors.Is(err, io.ErrUnexpectedEOF), errors.Is(err, io.EOF):
		return &FormatError{File: path, Msg: "truncated " + formatName(format) + " file (the data ends early)", Err: err}
	}
	return &FormatError{File: path, Msg: "bad " + formatName(format) + " data", Err: err}
}

func formatName(f string) string {
	switch f {
	case "png":
		return "PNG"
	case "jpeg":
		return "JPEG"
	case "tiff":
		return "TIFF"
	}
	return f
}

// Inspect reads a photo's header: size, format, bit depth, channels. It
// refuses images beyond the limits, as Load would.
func Inspect(path string) (Info, error) {
	f, format, err := open(path)
	if err != nil {
		return Info{}, err
	}
	defer f.Close()
	cfg, err := decodeConfig(f, path, format)
	if err != nil {
		return Info{}, err
	}
	info := Info{Width: cfg.Width, Height: cfg.Height, Format: format, BitDepth: 8, Channels: 3}
	switch cfg.ColorModel {
	case color.GrayModel:
		info.Channels = 1
	case color.Gray16Model:
		info.Channels, info.BitDepth = 1, 16
	case color.RGBA64Model:
		info.BitDepth = 16
	case color.NRGBA64Model:
		info.BitDepth, info.Alpha = 16, true
	case color.NRGBAModel:
		info.Alpha = true
	}
	// image/png reports RGBA64/NRGBA64 for 16-bit grey with alpha too, and
	// image/tiff reports RGBA for associated alpha; the decoded image says
	// exactly, but the header is enough for the checks that use Info.
	return info, nil
}

// DecodeConfig returns a photo's size and format ("png", "jpeg", "tiff").
func DecodeConfig(path string) (w, h int, format string, err error) {
	info, err := Inspect(path)
	return info.Width, info.Height, info.Format, err
}

// decode reads the whole image after checking its header.
func decode(path string) (image.Image, error) {
	f, format, err := open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	if _, err := decodeConfig(f, path, format); err != nil {
		return nil, err
	}
	if _, err := f.Seek(0, io.SeekStart); err != nil {
		return nil, err
	}
	var img image.Image
	switch format {
	case "png":
		img, err = png.Decode(bufio.NewReaderSize(f, 1<<16))
	case "jpeg":
		img, err = jpeg.Decode(bufio.NewReaderSize(f, 1<<16))
	case "tiff":
		img, err = tiff.Decode(f) // reads through io.ReaderAt, not all at once
	}
	if err != nil {
		if place := diagnose(f, format); place != "" {
			return nil, &FormatError{File: path, Msg: place, Err: err}
		}
		return nil, decodeError(path, format, err)
	}
	return img, nil
}

// Load decodes the photo at path into linear RGB with its saturation mask.
func Load(path string, d Decoding) (*Image, error) {
	d, err := d.normalised()
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	img, err := decode(path)
	if err != nil {
		return nil, err
	}
	out, err := Convert(img, d)
	if err != nil {
		return nil, &UnsupportedError{File: path, Msg: err.Error()}
	}
	return out, nil
}

// LoadMask reads a mask image of w x h pixels (any format Load reads):
// white means usable. A pixel is usable when its grey value (the mean of
// its normalised code values) is at least one half; alpha is ignored.
func LoadMask(path string, w, h int) ([]bool, error) {
	img, err := decode(path)
	if err != nil {
		return nil, err
	}
	b := img.Bounds()
	if b.Dx() != w || b.Dy() != h {
		return nil, &FormatError{File: path, Msg: fmt.Sprintf("mask is %dx%d pixels, the photo %dx%d", b.Dx(), b.Dy(), w, h)}
	}
	lin, err := Convert(img, Decoding{Encoding: "linear", SaturationThreshold: 2})
	if err != nil {
		return nil, &UnsupportedError{File: path, Msg: err.Error()}
	}
	mask := make([]bool, w*h)
	for i := range mask {
		p := lin.Pix[3*i : 3*i+3 : 3*i+3]
		mask[i] = p[0]+p[1]+p[2] >= 1.5
	}
	return mask, nil
}
