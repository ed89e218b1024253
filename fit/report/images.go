package report

import (
	"bytes"
	"fmt"
	"image"
	"image/png"
	"sync"
)

// encodePNG encodes img as PNG.
func encodePNG(img image.Image) ([]byte, error) {
	var b bytes.Buffer
	if err := png.Encode(&b, img); err != nil {
		return nil, fmt.Errorf("report: encoding a picture: %w", err)
	}
	return b.Bytes(), nil
}

// addImage stores a picture to embed and records its hash.
func (r *Report) addImage(name, caption string, simulation bool, b []byte) {
	r.images[name] = b
	rec := ImageRecord{Name: name, Caption: caption, Bytes: len(b), SHA256: sha256Hex(b), Simulation: simulation}
	if cfg, err := png.DecodeConfig(bytes.NewReader(b)); err == nil {
		rec.Width, rec.Height = cfg.Width, cfg.Height
	}
	r.Images = append(r.Images, rec)
}

// addHoldoutImages encodes the strip and the two maps of holdout k.
func (r *Report) addHoldoutImages(k int, rec *HoldoutRecord, ho *Holdout) error {
	if ho.Maps == nil || ho.Maps.Strip == nil {
		return fmt.Errorf("report: photo %s: the comparison drew no pictures", ho.File)
	}
	items := []struct {
		suffix, caption string
		img             image.Image
	}{
		// The Delta E 2000 map is the strip's right panel, with its legend
		// and statistics below the strip; the page does not repeat it.
		{"strip", fmt.Sprintf("Held-out photo %d (%s), left: the photograph. Middle: SIMULATION, a path-traced render of the same view with the fitted materials, not a photograph. Right: the CIEDE2000 colour difference between them per pixel, with its scale below; hatched pixels were not compared.", k+1, ho.File), ho.Maps.Strip},
		{"deltal", fmt.Sprintf("Held-out photo %d: lightness difference, SIMULATION minus photograph (CIELAB L*); blue where the simulation is darker, orange where it is lighter.", k+1), ho.Maps.DeltaLImage},
	}
	// The pictures are encoded in parallel; each encoding is
	// deterministic, and they are added in a fixed order.
	encoded := make([][]byte, len(items))
	errs := make([]error, len(items))
	var wg sync.WaitGroup
	for i, it := range items {
		if it.img == nil {
			continue
		}
		wg.Add(1)
		go func() {
			defer wg.Done()
			encoded[i], errs[i] = encodePNG(it.img)
		}()
	}
	wg.Wait()
	for i, it := range items {
		if it.img == nil {
			continue
		}
		if errs[i] != nil {
			return errs[i]
		}
		name := fmt.Sprintf("holdout-%d-%s.png", k+1, it.suffix)
		r.addImage(name, it.caption, true, encoded[i])
		rec.Images = append(rec.Images, name)
	}
	return nil
}

// addPlots draws the charts of the fit and of the holdout summary.
func (r *Report) addPlots() error {
	b, err := holdoutPlot(r.Holdouts, r.Tolerance)
	if err != nil {
		return err
	}
	if b != nil {
		r.addImage("chart-holdouts.png", "Mean and 95th-percentile Delta E 2000 of every held-out view against the tolerance's limits (photograph vs SIMULATION).", true, b)
	}
	var caption string
	if b, caption, err = convergencePlot(r.Materials.Segments); err != nil {
		return err
	}
	if b != nil {
		r.addImage("chart-residuals.png", caption, false, b)
	}
	if r.Materials.Fit != nil {
		if b, err = rejectionPlot(r.Materials.Fit.Rejections); err != nil {
			return err
		}
		if b != nil {
			r.addImage("chart-rejections.png", "Pixels of the fitting photos the fit left out, by reason, as the materials file records them.", false, b)
		}
	}
	return nil
}

// imageRecord returns the record of the picture called name.
func (r *Report) imageRecord(name string) (ImageRecord, bool) {
	for _, im := range r.Images {
		if im.Name == name {
			return im, true
		}
	}
	return ImageRecord{}, false
}
