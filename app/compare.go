package app

import (
	"context"
	"errors"
	"fmt"
	"image"
	"math"
	"path/filepath"

	"patina/assets/capture"
	"patina/fit/metrics"
	"patina/fit/report"
	"patina/render"
)

// CompareMode is how the Compare view shows photo and render.
type CompareMode int

// Compare display modes, in the order the wipe shortcut cycles them.
const (
	CompareSideBySide CompareMode = iota
	CompareWipe
	CompareDeltaE
)

func (m CompareMode) String() string {
	return [...]string{"side by side", "wipe", "Delta E 2000 map"}[m]
}

// compareMaxWidth caps the comparison's resolution (the photo is reduced
// by a whole factor above it) to keep a comparison to seconds.
const compareMaxWidth = 800

// CompareState is the Compare view's state and latest result.
type CompareState struct {
	Photo     int // holdout photo, -1 for none
	Mode      CompareMode
	Wipe      float64 // 0..1, the photo's share from the left
	Tolerance string  // a metrics preset name
	SPP       int     // samples per pixel of the render; 0 means 64

	Running bool
	Result  *metrics.Result
	Maps    *metrics.Maps
	Verdict *metrics.Verdict
	// PhotoImg and RenderImg are display images with the same gain, so
	// brightness differences show as they are.
	PhotoImg, RenderImg *image.RGBA
}

// SetCompareMode changes the display mode.
func (s *Session) SetCompareMode(m CompareMode) {
	s.Compare.Mode = m
	s.notify(ChangeCompare)
}

// CycleCompareMode steps side by side -> wipe -> Delta E map -> side by side.
func (s *Session) CycleCompareMode() { s.SetCompareMode((s.Compare.Mode + 1) % 3) }

// SetWipe moves the wipe line (0: all render, 1: all photo).
func (s *Session) SetWipe(x float64) {
	s.Compare.Wipe = math.Max(0, math.Min(1, x))
	s.notify(ChangeCompare)
}

// SetTolerance picks the tolerance preset and re-judges the result.
func (s *Session) SetTolerance(name string) error {
	t, err := metrics.PresetByName(name)
	if err != nil {
		return err
	}
	s.Compare.Tolerance = name
	if s.Compare.Result != nil {
		v := t.Verdict(s.Compare.Result)
		s.Compare.Verdict = &v
	}
	s.notify(ChangeCompare)
	return nil
}

// HoldoutPhotos lists the photos marked holdout.
func (s *Session) HoldoutPhotos() []int {
	if s.Capture == nil {
		return nil
	}
	return s.Capture.PhotosByUse(capture.UseHoldout)
}

// RunCompare renders the chosen photo's view under its lights with the
// current materials and compares it with the photo: PSNR, SSIM and Delta E
// 2000 over the pixels the mesh covers (and the mask keeps, unsaturated).
func (s *Session) RunCompare() (*Job, error) {
	if s.Capture == nil || s.Scene == nil {
		return nil, errors.New("open a capture first")
	}
	pi := s.Compare.Photo
	if pi < 0 || pi >= len(s.Capture.Photos) {
		return nil, errors.New("choose a holdout photo to compare with")
	}
	cam, err := s.photoCamera(pi)
	if err != nil {
		return nil, err
	}
	pl, err := s.photoLights(pi)
	if err != nil {
		return nil, err
	}
	tol, err := metrics.PresetByName(s.Compare.Tolerance)
	if err != nil {
		return nil, err
	}
	c, sc, mats, labelSeg, scale := s.Capture, s.Scene, s.renderMaterials(), s.LabelSeg, s.Scale
	spp := s.Compare.SPP
	if spp <= 0 {
		spp = 64
	}
	var names []string
	for _, seg := range s.Segments {
		names = append(names, seg.Name)
	}
	s.Compare.Running = true
	s.notify(ChangeCompare)
	file := filepath.Base(c.Photos[pi].File)
	s.setStatus("Comparing with "+file+": rendering its view", 0)
	var out CompareState
	cc := newCoalescer(s.post)
	return s.jobs.start("compare", func(ctx context.Context) error {
		img, err := c.LoadPhoto(pi)
		if err != nil {
			return err
		}
		mask, err := c.LoadMask(pi, img.Width, img.Height)
		if err != nil {
			return err
		}
		w, h, ppix := img.Width, img.Height, img.Pix
		f := 1
		for w/f > compareMaxWidth {
			f++
		}
		if cam.Width != w {
			cam = scaledPinhole(cam, float64(w)/float64(cam.Width))
		}
		if f > 1 {
			ppix, w, h = Downsample(img.Pix, img.Width, img.Height, img.Width/f, img.Height/f)
			cam = scaledPinhole(cam, 1/float64(f))
			cam.Width, cam.Height = w, h
		}
		// The report's bound on light of two or more scatterings, so
		// the view and `patina report` show the same comparison.
		dec, err := c.Decoding(pi)
		if err != nil {
			return err
		}
		clamp := report.DefaultIndirectClamp * dec.Exposure / scale
		film, err := render.Render(ctx, sc, cam, &render.Lights{Lights: pl}, mats, render.Settings{SPP: spp, Seed: 1, IndirectClamp: clamp,
			OnProgress: func(done, total int64) {
				frac := float64(done) / float64(total)
				cc.Post(func() { s.setStatus(fmt.Sprintf("Comparing with %s: rendering %.0f%%", file, 100*frac), 0.9*frac) })
			}})
		if err != nil {
			return err
		}
		rpix := film.RGB()
		for i := range rpix {
			rpix[i] *= float32(scale)
		}
		gb, err := render.Cast(ctx, sc, cam, image.Rect(0, 0, w, h), 0)
		if err != nil {
			return err
		}
		valid := make([]bool, w*h)
		segs := make([]int32, w*h)
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				k := y*w + x
				segs[k] = -1
				if l := gb.Segment[k]; l >= 0 && int(l) < len(labelSeg) {
					segs[k] = int32(labelSeg[l])
				}
				ok := gb.Hit[k]
				// A reduced pixel is valid only when every photo pixel it
				// averages is.
				for yy := y * f; ok && yy < y*f+f; yy++ {
					for xx := x * f; ok && xx < x*f+f; xx++ {
						o := yy*img.Width + xx
						if (mask != nil && !mask[o]) || (img.Saturated != nil && img.Saturated[o]) {
							ok = false
						}
					}
				}
				valid[k] = ok
			}
		}
		res, maps, err := metrics.Compare(rpix, ppix, w, h, valid, segs, names, metrics.Options{})
		if err != nil {
			return err
		}
		v := tol.Verdict(res)
		gain := AutoGain(ppix, w, h)
		d := NewDisplay(render.ToneMap{}, gain)
		out = CompareState{Result: res, Maps: maps, Verdict: &v,
			PhotoImg: d.Encode(nil, ppix, w, h), RenderImg: d.Encode(nil, rpix, w, h)}
		return nil
	}, func(err error) {
		s.post(func() {
			s.Compare.Running = false
			if s.Capture != c {
				return
			}
			if err != nil {
				s.notify(ChangeCompare)
				if errors.Is(err, context.Canceled) {
					s.setStatus("Comparison cancelled", -1)
					return
				}
				s.fail("Comparing with "+file, err, "Check that the photo loads in the Photos view and that its camera and lights are right; a fit first gives meaningful materials.")
				return
			}
			cs := &s.Compare
			cs.Result, cs.Maps, cs.Verdict, cs.PhotoImg, cs.RenderImg = out.Result, out.Maps, out.Verdict, out.PhotoImg, out.RenderImg
			s.setStatus(fmt.Sprintf("Compared with %s: mean Delta E 2000 %.2f, %s", file, out.Result.DE2000Mean, verdictWord(out.Verdict)), -1)
			s.notify(ChangeCompare)
		})
	}), nil
}

func verdictWord(v *metrics.Verdict) string {
	if v == nil {
		return ""
	}
	if v.Pass {
		return "PASS against " + v.Tolerance.Name
	}
	return "FAIL against " + v.Tolerance.Name
}
