package app

import (
	"context"
	"image"

	"patina/render"
)

// Thumbnail sizes, pixels.
const (
	ThumbW = 96
	ThumbH = 72
)

// Thumbnail returns photo i's thumbnail, or nil and queues it for loading
// in the background (one photo decoded at a time, most recent request
// first, so the rows on screen come in first).
func (s *Session) Thumbnail(i int) *image.RGBA {
	s.thumbMu.Lock()
	defer s.thumbMu.Unlock()
	if t := s.thumbs[i]; t != nil {
		return t
	}
	if s.Capture == nil || i < 0 || i >= len(s.Capture.Photos) || s.thumbReq[i] {
		return nil
	}
	s.thumbReq[i] = true
	s.thumbQ = append(s.thumbQ, i)
	if !s.thumbRunning {
		s.thumbRunning = true
		s.startThumbs(s.thumbGen)
	}
	return nil
}

// startThumbs runs the loader; thumbMu is held by the caller.
func (s *Session) startThumbs(gen int) {
	c := s.Capture
	cc := newCoalescer(s.post)
	s.jobs.start("thumbnails", func(ctx context.Context) error {
		for ctx.Err() == nil {
			s.thumbMu.Lock()
			if len(s.thumbQ) == 0 || s.thumbGen != gen {
				if s.thumbGen == gen {
					s.thumbRunning = false
				}
				s.thumbMu.Unlock()
				return nil
			}
			i := s.thumbQ[len(s.thumbQ)-1]
			s.thumbQ = s.thumbQ[:len(s.thumbQ)-1]
			s.thumbMu.Unlock()
			img, err := c.LoadPhoto(i)
			var t *image.RGBA
			if err == nil {
				pix, w, h := Downsample(img.Pix, img.Width, img.Height, ThumbW, ThumbH)
				t = NewDisplay(render.ToneMap{}, AutoGain(pix, w, h)).Encode(nil, pix, w, h)
			} else {
				t = image.NewRGBA(image.Rect(0, 0, 4, 3)) // a dark tile marks a photo that failed
			}
			s.thumbMu.Lock()
			if s.thumbGen == gen {
				s.thumbs[i] = t
			}
			s.thumbMu.Unlock()
			cc.Post(func() { s.notify(ChangeThumbnail) })
		}
		s.thumbMu.Lock()
		if s.thumbGen == gen {
			s.thumbRunning = false
		}
		s.thumbMu.Unlock()
		return ctx.Err()
	}, nil)
}

// ThumbnailsDone reports whether no thumbnail is waiting to load.
func (s *Session) ThumbnailsDone() bool {
	s.thumbMu.Lock()
	defer s.thumbMu.Unlock()
	return len(s.thumbQ) == 0 && !s.thumbRunning
}
