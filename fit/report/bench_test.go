package report

import (
	"context"
	"os"
	"path/filepath"
	"strconv"
	"testing"
)

// BenchmarkReportJarSmall is the whole report of the jar-small fixture
// (one 64x48 holdout view, automatic samples per pixel, all cores): load,
// render, compare, pictures and charts, page and record.
func BenchmarkReportJarSmall(b *testing.B) {
	dir := b.TempDir()
	mat := writeMaterialsB(b, dir)
	b.ReportAllocs()
	for b.Loop() {
		r, err := Build(context.Background(), jarSmall, mat, Options{}, Provenance{Program: "patina"})
		if err != nil {
			b.Fatal(err)
		}
		if _, err := r.WriteFiles(filepath.Join(dir, "report.html")); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkReportDemo is the whole report of a demo capture made by
// `patina demo` and fitted by `patina fit`: PATINA_REPORT_CAPTURE names its
// capture.json and PATINA_REPORT_MATERIALS the materials file. It is
// skipped without them (the full demo takes minutes to make). The issue's
// goal for the full demo (1280x960, every holdout view) is under 2 minutes
// on a 2-core machine. PATINA_REPORT_SPP, if set, fixes the samples per
// pixel (for profiles of the render alone).
func BenchmarkReportDemo(b *testing.B) {
	capPath, matPath := os.Getenv("PATINA_REPORT_CAPTURE"), os.Getenv("PATINA_REPORT_MATERIALS")
	if capPath == "" || matPath == "" {
		b.Skip("set PATINA_REPORT_CAPTURE and PATINA_REPORT_MATERIALS to a demo capture and its fitted materials")
	}
	var opts Options
	if s := os.Getenv("PATINA_REPORT_SPP"); s != "" {
		n, err := strconv.Atoi(s)
		if err != nil {
			b.Fatalf("PATINA_REPORT_SPP=%q: %v", s, err)
		}
		opts.SPP = n
	}
	dir := b.TempDir()
	b.ReportAllocs()
	for b.Loop() {
		r, err := Build(context.Background(), capPath, matPath, opts, Provenance{Program: "patina"})
		if err != nil {
			b.Fatal(err)
		}
		w, err := r.WriteFiles(filepath.Join(dir, "report.html"))
		if err != nil {
			b.Fatal(err)
		}
		b.ReportMetric(float64(w.HTMLBytes)/(1<<20), "page-MiB")
	}
}
