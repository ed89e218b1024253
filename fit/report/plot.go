package report

import (
	"bytes"
	"fmt"
	"image/color"
	"math"
	"sort"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
)

// Plot sizes and resolution of the embedded charts.
const (
	plotWidth  = 6.4 * vg.Inch
	plotHeight = 3.2 * vg.Inch
	plotDPI    = 110
)

var (
	inkMain   = color.RGBA{R: 0x2f, G: 0x5d, B: 0x8a, A: 0xff}
	inkSecond = color.RGBA{R: 0xc0, G: 0x7a, B: 0x2c, A: 0xff}
	inkLimit  = color.RGBA{R: 0xa3, G: 0x2a, B: 0x2a, A: 0xff}
)

// pngOf draws p as a PNG image.
func pngOf(p *plot.Plot) ([]byte, error) {
	c := vgimg.PngCanvas{Canvas: vgimg.NewWith(vgimg.UseWH(plotWidth, plotHeight), vgimg.UseDPI(plotDPI))}
	p.Draw(draw.New(c))
	var b bytes.Buffer
	if _, err := c.WriteTo(&b); err != nil {
		return nil, fmt.Errorf("report: drawing %q: %w", p.Title.Text, err)
	}
	return b.Bytes(), nil
}

// sans is the charts' typeface, the Liberation Sans that gonum's plot
// embeds, close to the page's own sans-serif.
var sans = font.Font{Typeface: "Liberation", Variant: "Sans"}

func newPlot(title, ylabel string, names []string) *plot.Plot {
	p := plot.New()
	p.Title.Text = title
	p.Title.TextStyle.Font = font.From(sans, 12)
	p.Title.Padding = vg.Points(6)
	p.X.Label.TextStyle.Font = font.From(sans, 10)
	p.Y.Label.TextStyle.Font = font.From(sans, 10)
	p.X.Tick.Label.Font = font.From(sans, 9)
	p.Y.Tick.Label.Font = font.From(sans, 9)
	p.Legend.TextStyle.Font = font.From(sans, 9)
	p.Y.Label.Text = ylabel
	p.Y.Min = 0
	if len(names) > 0 { // a numeric x axis has no names
		p.NominalX(names...)
	}
	p.Add(plotter.NewGrid())
	p.Legend.Top = true
	return p
}

// convergencePlot draws the fit's convergence: the robust loss after every
// pass over each segment's observations, on a logarithmic axis (the loss
// falls by orders of magnitude), one line per segment, from the materials
// file's loss_history. The curve of a segment restarts at each roughness
// start and its line searches try points that raise the loss, so the lines
// are not monotone. A file without any history (written before it was
// recorded) gets the final RMS residual per segment instead. It returns the
// PNG and the caption that says which of the two it drew.
func convergencePlot(segs []SegmentRecord) ([]byte, string, error) {
	p, err := convergencePlotOf(segs)
	if err != nil || p == nil {
		return nil, "", err
	}
	b, err := pngOf(p)
	if err != nil {
		return nil, "", err
	}
	return b, convergenceCaption(segs), nil
}

// hasHistory reports whether any segment records its loss per pass.
func hasHistory(segs []SegmentRecord) bool {
	for _, s := range segs {
		if len(s.LossHistory) > 0 {
			return true
		}
	}
	return false
}

func convergenceCaption(segs []SegmentRecord) string {
	if hasHistory(segs) {
		return "Robust loss (Charbonnier on log radiance) after every pass of the fit over each segment's observations, as the materials file records it; a segment's curve restarts at each roughness start, and line-search trials may raise it."
	}
	return "Root-mean-square photometric residual of every fitted segment at the fit's solution (linear radiance, capture units), as the materials file records it (it has no loss per pass)."
}

// convergencePlotOf builds the plot convergencePlot draws (nil when there
// is nothing to draw).
func convergencePlotOf(segs []SegmentRecord) (*plot.Plot, error) {
	if !hasHistory(segs) {
		return residualPlotOf(segs)
	}
	names, series, floor := convergenceSeries(segs)
	p := newPlot("Fit convergence: loss per pass", "loss (log scale)", nil)
	p.X.Label.Text = "pass over the segment's observations"
	p.Y.Scale = plot.LogScale{}
	p.Y.Tick.Marker = plot.LogTicks{Prec: -1}
	p.Y.Min = floor
	styles := []color.Color{inkMain, inkSecond, inkLimit,
		color.RGBA{R: 0x3f, G: 0x8f, B: 0x4f, A: 0xff}, color.RGBA{R: 0x7b, G: 0x4f, B: 0x9d, A: 0xff},
		color.RGBA{R: 0x55, G: 0x55, B: 0x55, A: 0xff}}
	for k, xy := range series {
		l, err := plotter.NewLine(xy)
		if err != nil {
			return nil, fmt.Errorf("report: convergence of segment %q: %w", names[k], err)
		}
		l.Color = styles[k%len(styles)]
		l.Width = vg.Points(1.5)
		if k >= len(styles) {
			l.Dashes = []vg.Length{vg.Points(5), vg.Points(3)}
		}
		p.Add(l)
		p.Legend.Add(names[k], l)
	}
	return p, nil
}

// convergenceSeries returns the segments with a loss history, their
// points (pass from 1, loss) and the floor of the logarithmic axis: a loss
// of exactly 0 (a perfect fit) is drawn at the smallest positive loss.
func convergenceSeries(segs []SegmentRecord) ([]string, []plotter.XYs, float64) {
	floor := math.Inf(1)
	for _, s := range segs {
		for _, v := range s.LossHistory {
			if v > 0 && v < floor {
				floor = v
			}
		}
	}
	if math.IsInf(floor, 1) {
		floor = 1
	}
	var names []string
	var series []plotter.XYs
	for _, s := range segs {
		if len(s.LossHistory) == 0 {
			continue
		}
		xy := make(plotter.XYs, len(s.LossHistory))
		for i, v := range s.LossHistory {
			xy[i] = plotter.XY{X: float64(i + 1), Y: math.Max(v, floor)}
		}
		names = append(names, s.Name)
		series = append(series, xy)
	}
	return names, series, floor
}

// residualPlotOf draws the fit's final RMS residual per fitted segment, the
// fallback of convergencePlotOf.
func residualPlotOf(segs []SegmentRecord) (*plot.Plot, error) {
	var names []string
	var vals plotter.Values
	for _, s := range segs {
		if s.RMSE == nil {
			continue
		}
		names = append(names, s.Name)
		vals = append(vals, *s.RMSE)
	}
	if len(vals) == 0 {
		return nil, nil
	}
	p := newPlot("Fit residual per segment at the solution", "RMS residual (linear radiance)", names)
	bars, err := plotter.NewBarChart(vals, vg.Points(28))
	if err != nil {
		return nil, err
	}
	bars.Color = inkMain
	bars.LineStyle.Width = 0
	p.Add(bars)
	return p, nil
}

// rejectionPlot draws the counts of pixels the fit left out, by reason.
func rejectionPlot(rej map[string]int) ([]byte, error) {
	if len(rej) == 0 {
		return nil, nil
	}
	keys := make([]string, 0, len(rej))
	for k := range rej {
		keys = append(keys, k)
	}
	sort.Slice(keys, func(i, j int) bool {
		if rej[keys[i]] != rej[keys[j]] {
			return rej[keys[i]] > rej[keys[j]]
		}
		return keys[i] < keys[j]
	})
	var vals plotter.Values
	var names []string
	for _, k := range keys {
		vals = append(vals, float64(rej[k]))
		names = append(names, reasonWords(k))
	}
	p := newPlot("Pixels the fit left out, by reason", "pixels", names)
	bars, err := plotter.NewBarChart(vals, vg.Points(28))
	if err != nil {
		return nil, err
	}
	bars.Color = inkSecond
	bars.LineStyle.Width = 0
	p.Add(bars)
	return pngOf(p)
}

// holdoutPlot draws the mean and 95th-percentile Delta E 2000 of every
// holdout photo with the tolerance's limits as lines.
func holdoutPlot(hs []HoldoutRecord, tol ToleranceRecord) ([]byte, error) {
	if len(hs) == 0 {
		return nil, nil
	}
	var names []string
	var mean, p95 plotter.Values
	top := 0.0
	for i, h := range hs {
		names = append(names, fmt.Sprintf("%d", i+1))
		mean = append(mean, h.Metrics.DE2000Mean)
		p95 = append(p95, h.Metrics.DE2000P95)
		top = math.Max(top, h.Metrics.DE2000P95)
	}
	p := newPlot("Colour difference of each held-out view (photo vs simulation)", "\u0394E00", names)
	p.X.Label.Text = "held-out photo (numbered as in the table)"
	w := vg.Points(14)
	b1, err := plotter.NewBarChart(mean, w)
	if err != nil {
		return nil, err
	}
	b1.Color, b1.LineStyle.Width, b1.Offset = inkMain, 0, -w/2
	b2, err := plotter.NewBarChart(p95, w)
	if err != nil {
		return nil, err
	}
	b2.Color, b2.LineStyle.Width, b2.Offset = inkSecond, 0, w/2
	p.Add(b1, b2)
	p.Legend.Add("mean", b1)
	p.Legend.Add("95th percentile", b2)
	limit := func(v float64, label string, dash bool) error {
		if v <= 0 {
			return nil
		}
		top = math.Max(top, v)
		l, err := plotter.NewLine(plotter.XYs{{X: -0.5, Y: v}, {X: float64(len(hs)) - 0.5, Y: v}})
		if err != nil {
			return err
		}
		l.Color = inkLimit
		l.Width = vg.Points(1.5)
		if dash {
			l.Dashes = []vg.Length{vg.Points(5), vg.Points(3)}
		}
		p.Add(l)
		p.Legend.Add(label, l)
		return nil
	}
	if err := limit(tol.MeanMax, fmt.Sprintf("limit on the mean (%s)", tol.Name), false); err != nil {
		return nil, err
	}
	if err := limit(tol.P95Max, fmt.Sprintf("limit on the 95th percentile (%s)", tol.Name), true); err != nil {
		return nil, err
	}
	// Head room for the legend above the bars.
	p.Y.Max = 1.6 * top
	return pngOf(p)
}

// reasonWords spells a rejection key for people.
func reasonWords(k string) string {
	switch k {
	case "under_exposed":
		return "under-exposed"
	case "shadow_edge":
		return "shadow edge"
	}
	return k
}
