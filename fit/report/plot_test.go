package report

import (
	"bytes"
	"image/png"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/plot/vg"
)

// TestConvergencePlotDrawsLossHistory checks that the convergence chart
// plots every recorded loss at its pass (x = 1, 2, ...; y = loss, with an
// exact 0 raised to the smallest positive loss for the log axis), one line
// per segment with a history, that the image decodes as PNG at the chart's
// size, and that a file without history falls back to the residual bars
// with a caption that says so.
func TestConvergencePlotDrawsLossHistory(t *testing.T) {
	rmse := 0.01
	segs := []SegmentRecord{
		{Name: "glaze", LossHistory: []float64{0.5, 0.2, 0.3, 0.01, 0.001}, RMSE: &rmse},
		{Name: "card", LossHistory: []float64{0.04, 0}, RMSE: &rmse},
		{Name: "unfitted"},
	}
	names, series, floor := convergenceSeries(segs)
	if len(series) != 2 || names[0] != "glaze" || names[1] != "card" || floor != 0.001 {
		t.Fatalf("series of %v, floor %v; want glaze and card, floor 0.001", names, floor)
	}
	for li, want := range [][]float64{{0.5, 0.2, 0.3, 0.01, 0.001}, {0.04, 0.001}} {
		xy := series[li]
		if xy.Len() != len(want) {
			t.Fatalf("line %d: %d points, want %d", li, xy.Len(), len(want))
		}
		for i, w := range want {
			if x, y := xy.XY(i); x != float64(i+1) || y != w {
				t.Errorf("line %d point %d = (%v, %v), want (%d, %v)", li, i, x, y, i+1, w)
			}
		}
	}
	p, err := convergencePlotOf(segs)
	if err != nil {
		t.Fatal(err)
	}
	if p.Y.Min != 0.001 || p.Y.Max != 0.5 {
		t.Errorf("y range [%v, %v], want [0.001, 0.5]", p.Y.Min, p.Y.Max)
	}
	b, caption, err := convergencePlot(segs)
	if err != nil {
		t.Fatal(err)
	}
	img, err := png.Decode(bytes.NewReader(b))
	if err != nil {
		t.Fatal(err)
	}
	if w := img.Bounds().Dx(); math.Abs(float64(w)-float64(plotWidth/vg.Inch)*plotDPI) > 1 {
		t.Errorf("width %d px", w)
	}
	if !strings.Contains(caption, "after every pass") {
		t.Errorf("caption %q", caption)
	}

	old := []SegmentRecord{{Name: "glaze", RMSE: &rmse}}
	b, caption, err = convergencePlot(old)
	if err != nil || b == nil || !strings.Contains(caption, "no loss per pass") {
		t.Errorf("fallback: %d bytes, caption %q, %v", len(b), caption, err)
	}
	if b, _, err = convergencePlot([]SegmentRecord{{Name: "x"}}); b != nil || err != nil {
		t.Errorf("nothing to draw: %d bytes, %v", len(b), err)
	}
}
