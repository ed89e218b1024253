package capture

import (
	"fmt"

	"patina/assets/photo"
)

// decodingOf returns how photo ph decodes to linear radiance.
func decodingOf(ph *Photo) (photo.Decoding, error) {
	m := ph.Exposure.Multiplier()
	if !(m > 0) || !finite(m) {
		return photo.Decoding{}, fmt.Errorf("exposure multiplier %v must be positive", m)
	}
	return photo.Decoding{
		Encoding:   ph.Encoding,
		BlackLevel: ph.BlackLevel,
		WhiteLevel: ph.WhiteLevel,
		Exposure:   m,
	}, nil
}

// Decoding returns how photo i decodes to linear radiance in the capture's
// scale (its encoding, black and white levels and exposure multiplier).
func (c *Capture) Decoding(i int) (photo.Decoding, error) {
	if i < 0 || i >= len(c.Photos) {
		return photo.Decoding{}, fmt.Errorf("photo index %d out of range (%d photos)", i, len(c.Photos))
	}
	return decodingOf(&c.Photos[i])
}

// LoadPhoto decodes photo i into linear radiance in the capture's scale.
// The image is checked against the photo's camera size.
func (c *Capture) LoadPhoto(i int) (*photo.Image, error) {
	d, err := c.Decoding(i)
	if err != nil {
		return nil, fmt.Errorf("photos[%d]: %w", i, err)
	}
	ph := &c.Photos[i]
	img, err := photo.Load(c.Resolve(ph.File), d)
	if err != nil {
		return nil, err
	}
	if cam, _ := c.CameraByID(ph.Camera); cam != nil && (cam.Width != img.Width || cam.Height != img.Height) {
		return nil, fmt.Errorf("%s: %dx%d pixels but camera %q is %dx%d", ph.File, img.Width, img.Height, cam.ID, cam.Width, cam.Height)
	}
	return img, nil
}

// LoadMask reads photo i's mask (true = usable pixel), or returns nil
// when the photo has none.
func (c *Capture) LoadMask(i int, w, h int) ([]bool, error) {
	if i < 0 || i >= len(c.Photos) {
		return nil, fmt.Errorf("photo index %d out of range (%d photos)", i, len(c.Photos))
	}
	if c.Photos[i].Mask == "" {
		return nil, nil
	}
	return photo.LoadMask(c.Resolve(c.Photos[i].Mask), w, h)
}
