package hdr

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"patina/assets/atomicfile"
)

// kind returns "rgbe" or "pfm" for a file name by its extension
// (.hdr and .pic are Radiance RGBE, .pfm is PFM; any case).
func kind(path string) (string, error) {
	switch strings.ToLower(filepath.Ext(path)) {
	case ".hdr", ".pic":
		return "rgbe", nil
	case ".pfm":
		return "pfm", nil
	}
	return "", fmt.Errorf("%s: unknown HDR image extension %q, expected .hdr, .pic or .pfm", path, filepath.Ext(path))
}

// ReadFile decodes an HDR image chosen by the file's extension: .hdr and
// .pic as Radiance RGBE, .pfm as PFM. Errors name the file.
func ReadFile(path string) (*Image, error) {
	k, err := kind(path)
	if err != nil {
		return nil, err
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	var m *Image
	if k == "rgbe" {
		m, _, err = DecodeRGBE(f)
	} else {
		m, err = DecodePFM(f)
	}
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	return m, nil
}

// ReadFileConfig returns the width and height from the header of an HDR
// image file chosen by extension, without decoding the pixels.
func ReadFileConfig(path string) (width, height int, err error) {
	k, err := kind(path)
	if err != nil {
		return 0, 0, err
	}
	f, err := os.Open(path)
	if err != nil {
		return 0, 0, err
	}
	defer f.Close()
	if k == "rgbe" {
		info, err := DecodeRGBEConfig(f)
		if err != nil {
			return 0, 0, fmt.Errorf("%s: %w", path, err)
		}
		return info.Width, info.Height, nil
	}
	info, err := DecodePFMConfig(f)
	if err != nil {
		return 0, 0, fmt.Errorf("%s: %w", path, err)
	}
	return info.Width, info.Height, nil
}

// WriteFile encodes m by the file's extension (.hdr/.pic: RGBE, .pfm:
// colour PFM) and writes it atomically, so a failure never leaves a partial
// file.
func WriteFile(path string, m *Image) error {
	k, err := kind(path)
	if err != nil {
		return err
	}
	if err := checkImage(m); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	return atomicfile.Write(path, 0o644, func(w io.Writer) error {
		if k == "rgbe" {
			return EncodeRGBE(w, m)
		}
		return EncodePFM(w, m)
	})
}
