package report

import (
	"context"
	"path/filepath"
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
