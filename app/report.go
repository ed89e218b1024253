package app

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"

	"patina/fit/metrics"
	"patina/fit/report"
)

// ErrSaveFirst says the report needs the capture and materials on disk as
// the workbench shows them.
var ErrSaveFirst = errors.New("the report is made from the saved files: save the capture and the materials first (Ctrl+S)")

// ExportReport writes the holdout report (the HTML page and its JSON
// record, as 'patina report' does) for the saved capture and materials
// file, in the background.
func (s *Session) ExportReport(htmlPath string) (*Job, error) {
	if s.Capture == nil {
		return nil, errors.New("open a capture first")
	}
	if s.CaptureDirty || s.MaterialsDirty || s.MaterialsPath == "" {
		return nil, ErrSaveFirst
	}
	tol, err := metrics.PresetByName(s.Compare.Tolerance)
	if err != nil {
		return nil, err
	}
	capPath, matPath := s.Capture.Path, s.MaterialsPath
	cc := newCoalescer(s.post)
	s.setStatus("Writing the report: rendering the holdout views", 0)
	var w *report.Written
	return s.jobs.start("report", func(ctx context.Context) error {
		r, err := report.Build(ctx, capPath, matPath, report.Options{Tolerance: tol, Progress: func(p report.Progress) {
			cc.Post(func() {
				s.setStatus(fmt.Sprintf("Writing the report: %s photo %d of %d (%s)", p.Stage, p.Photo, p.Photos, filepath.Base(p.File)), p.Fraction)
			})
		}}, report.Provenance{Program: "patina", Version: "workbench", Revision: "unknown", CommandLine: os.Args})
		if err != nil {
			return err
		}
		w, err = r.WriteFiles(htmlPath)
		return err
	}, func(err error) {
		s.post(func() {
			if err != nil {
				if errors.Is(err, context.Canceled) {
					s.setStatus("Report cancelled; nothing was written", -1)
					return
				}
				s.fail("Writing the report", err, "Check that the capture and materials files load ('patina check'), that some photos are holdout, and that the folder is writable.")
				return
			}
			s.setStatus("Report written: "+w.HTML+" and "+w.JSON, -1)
		})
	}), nil
}
