package app

import (
	"context"
	"errors"
	"fmt"
	"strings"

	"patina/brdf"
	"patina/fit"
)

// FitState is the live state of a fit.
type FitState struct {
	Running  bool
	Stage    fit.Stage
	Fraction float64
	Segment  string
	Pass     int
	Loss     float64
	Params   brdf.Params
	// Curve is the loss after every pass of the segment being fitted (the
	// curve restarts with each segment, whose losses are not comparable).
	Curve []float64
	// Samples is fit.Options.Samples (observations per segment and photo).
	Samples int
	// Err is the last fit's error, nil after a success; Cancelled marks a
	// fit the user stopped.
	Err       error
	Cancelled bool
	// Lock notes the parameters a lock held at the user's value when the
	// last result came in.
	LockNote string
}

// StartFit runs the whole fit of the capture in the background with the
// current segment models. Progress arrives coalesced; the result fills the
// segment table, except for locked parameters, which keep their values.
func (s *Session) StartFit() (*Job, error) {
	if s.Capture == nil || s.Mesh == nil {
		return nil, errors.New("open a capture first")
	}
	s.Fit = FitState{Running: true, Samples: s.Fit.Samples, Stage: fit.StageObservations}
	s.notify(ChangeFit)
	s.setStatus("Fitting: reading photos", 0)
	c := s.Capture
	cc := newCoalescer(s.post)
	var last fit.Progress
	var lastSeg = -1
	opts := fit.Options{Samples: s.Fit.Samples, Locks: s.fitLocks(), Progress: func(p fit.Progress) {
		s.fitMu.Lock()
		if p.Stage == fit.StageFit {
			if p.Segment != lastSeg {
				s.fitLive = s.fitLive[:0]
				lastSeg = p.Segment
			}
			s.fitLive = append(s.fitLive, p.Loss)
		}
		last = p
		s.fitMu.Unlock()
		cc.Post(func() { s.fitProgress() })
	}}
	s.fitMu.Lock()
	s.fitLive = nil
	s.fitMu.Unlock()
	// Keep the closure's view of the progress for fitProgress.
	s.fitLast = func() fit.Progress {
		s.fitMu.Lock()
		defer s.fitMu.Unlock()
		return last
	}
	var res *fit.Result
	job := s.jobs.start("fit", func(ctx context.Context) error {
		var err error
		res, err = fit.Run(ctx, c, opts)
		return err
	}, func(err error) {
		s.post(func() {
			if s.Capture != c {
				return
			}
			s.fitProgress()
			s.Fit.Running = false
			if err != nil {
				s.Fit.Err = err
				s.Fit.Cancelled = errors.Is(err, context.Canceled)
				s.notify(ChangeFit)
				if s.Fit.Cancelled {
					s.setStatus("Fit cancelled; the segment table keeps its values", -1)
					return
				}
				s.fail("The fit", err, "Check the capture ('patina check'), make sure some photos are marked fit, and try again.")
				return
			}
			s.applyFit(res)
			s.notify(ChangeFit)
			s.setStatus(fmt.Sprintf("Fit done in %.1f s: %d segments, %d passes", res.Seconds, len(res.Segments), res.Passes), -1)
		})
	})
	return job, nil
}

// fitProgress copies the worker's latest progress into the state (UI
// goroutine).
func (s *Session) fitProgress() {
	if s.fitLast == nil {
		return
	}
	p := s.fitLast()
	f := &s.Fit
	s.fitMu.Lock()
	f.Curve = append(f.Curve[:0], s.fitLive...)
	s.fitMu.Unlock()
	f.Stage, f.Fraction, f.Segment, f.Pass, f.Loss, f.Params = p.Stage, p.Fraction, p.SegmentName, p.Pass, p.Loss, p.Params
	msg := "Fitting: " + string(p.Stage)
	switch p.Stage {
	case fit.StageObservations:
		msg = fmt.Sprintf("Fitting: reading photo %d of %d", p.Photo, p.Photos)
	case fit.StageFit:
		msg = fmt.Sprintf("Fitting segment %s (%d of %d), pass %d, loss %.4g", p.SegmentName, p.Segment+1, p.Segments, p.Pass, p.Loss)
	}
	if f.Running {
		s.Status, s.Progress = msg, p.Fraction
		s.notify(ChangeStatus)
	}
	s.notify(ChangeFit)
}

// fitLocks turns the table's held parameters into the fit's locks, at the
// table's values. A metal has no diffuse colour, so a diffuse hold on one
// is left out.
func (s *Session) fitLocks() map[string]fit.Lock {
	locks := map[string]fit.Lock{}
	for _, sm := range s.Materials {
		var names []string
		if sm.Locked&LockDiffuse != 0 && sm.Params.Kind != brdf.Metal {
			names = append(names, fit.ParamDiffuse)
		}
		if sm.Locked&LockSpecular != 0 {
			names = append(names, fit.ParamSpecular)
		}
		if sm.Locked&LockRoughness != 0 {
			names = append(names, fit.ParamRoughness)
		}
		if len(names) > 0 {
			locks[sm.Name] = fit.Lock{Names: names, Values: sm.Params}
		}
	}
	return locks
}

// CancelFit stops a running fit.
func (s *Session) CancelFit() { s.jobs.cancel("fit") }

// applyFit copies a fit result into the segment table. The fit held the
// locked parameters at the table's values (fitLocks), so they come back
// unchanged; they are copied from the table all the same, so a lock set
// while the fit ran is honoured too.
func (s *Session) applyFit(res *fit.Result) {
	s.FitResult = res
	if res.Scale.Value > 0 {
		s.Scale = res.Scale.Value
	}
	var held []string
	for _, sf := range res.Segments {
		for i := range s.Materials {
			sm := &s.Materials[i]
			if sm.Name != sf.Name {
				continue
			}
			p := sf.Params
			if sm.Locked&LockDiffuse != 0 && p.Kind != brdf.Metal {
				p.Diffuse = sm.Params.Diffuse
				held = append(held, sm.Name+" diffuse")
			}
			if sm.Locked&LockSpecular != 0 {
				p.Specular = sm.Params.Specular
				held = append(held, sm.Name+" specular")
			}
			if sm.Locked&LockRoughness != 0 {
				p.Roughness = sm.Params.Roughness
				held = append(held, sm.Name+" roughness")
			}
			sig := sf.Sigma
			sm.Params, sm.Sigma = p, &sig
			sm.Observations, sm.NearSpecular, sm.RMSE, sm.Fitted = sf.Observations, sf.NearSpecular, sf.RMSE, sf.Fitted
			sm.Warnings = append([]string(nil), sf.Warnings...)
			sm.Preset = ""
		}
	}
	s.Fit.LockNote = ""
	if len(held) > 0 {
		s.Fit.LockNote = "Held at your values during the fit (the other parameters were fitted with these fixed): " + strings.Join(held, ", ")
	}
	s.MaterialsDirty = true
	s.notify(ChangeMaterials)
	s.notify(ChangeDirty)
	s.RestartRelight()
}
