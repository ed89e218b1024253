package report

import (
	"bytes"
	"encoding/base64"
	"fmt"
	"html/template"
	"math"
	"strings"

	"patina/assets/materials"
	"patina/render/colour"
)

// HTML returns the self-contained page: every picture is embedded as a
// base64 PNG data URI, the style sheet is inline, and there is no script and
// no external reference, so the file reads the same offline and in years.
// jsonName and sumsName are the companion files the page names.
func (r *Report) HTML(jsonName, sumsName string) ([]byte, error) {
	data := &pageData{R: r, JSONName: jsonName, SumsName: sumsName}
	var b bytes.Buffer
	if err := pageTemplate.Execute(&b, data); err != nil {
		return nil, fmt.Errorf("report: writing the page: %w", err)
	}
	return b.Bytes(), nil
}

type pageData struct {
	R                  *Report
	JSONName, SumsName string
}

// figureHTML is the figure element of the embedded picture called name,
// or nothing when there is none. It is built here rather than in the
// template so that the base64 text goes into the page as it is (the
// template's attribute escaping would write '+' as a character reference).
func figureHTML(r *Report, name string) template.HTML {
	b, ok := r.images[name]
	if !ok {
		return ""
	}
	rec, _ := r.imageRecord(name)
	capt := template.HTMLEscapeString(rec.Caption)
	// Pictures of small captures are enlarged with square pixels, so that
	// single pixels stay visible; large ones are shown at the page's width.
	size := ""
	if rec.Width > 0 && rec.Width < 500 {
		size = fmt.Sprintf(` class="px" style="width: %dpx"`, 2*rec.Width)
	}
	return template.HTML(`<figure><img` + size + ` src="data:image/png;base64,` + base64.StdEncoding.EncodeToString(b) +
		`" alt="` + capt + `"><figcaption>` + capt + `</figcaption></figure>`)
}

var pageTemplate = template.Must(template.New("page").Funcs(template.FuncMap{
	"figure": figureHTML,
	"f":      func(prec int, v float64) string { return fnum(v, prec) },
	"db":     func(v float64) string { return decibels(v) },
	"pm":     func(v, s float64, has bool) string { return plusMinus(v, s, has) },
	"rgb":    rgbText,
	"rgbpm": func(v [3]float64, s *materials.Sigma, diffuse bool) string {
		if s == nil {
			return rgbText(v)
		}
		sig := s.Specular
		if diffuse {
			sig = s.Diffuse
		}
		parts := make([]string, 3)
		for i := range parts {
			parts[i] = plusMinus(v[i], sig[i], true)
		}
		return strings.Join(parts, ", ")
	},
	"swatch": swatchCSS,
	"inc":    func(i int) int { return i + 1 },
	"join":   strings.Join,
	"seg": func(r *HoldoutRecord, idx int) *SegmentVerdictRecord {
		for i := range r.Verdict.Segments {
			if r.Verdict.Segments[i].Index == idx {
				return &r.Verdict.Segments[i]
			}
		}
		return nil
	},
	"verdictWord": func(p bool) string {
		if p {
			return "PASS"
		}
		return "FAIL"
	},
	"cmp": func(t ToleranceRecord) string {
		if t.Strict {
			return "<"
		}
		return "\u2264"
	},
	"ratio": func(s Sampling) string {
		if q := s.Ratio(); !math.IsNaN(q) {
			return fnum(q, 2)
		}
		return "unknown"
	},
	"sci":   func(v float64) string { return fmt.Sprintf("%.3g", v) },
	"short": func(s string) string { return shortHash(s) },
	"agree": func(passed, n int) string {
		if n == 1 {
			return "held-out photo agrees"
		}
		return "held-out photos agree"
	},
	"use":     func(r *Report, u string) int { return r.Capture.Photos[u] },
	"deref":   func(p *[3]float64) [3]float64 { return *p },
	"deref1":  func(p *float64) float64 { return *p },
	"rejkeys": sortedKeys,
}).Parse(pageHTML))

func fnum(v float64, prec int) string {
	switch {
	case math.IsInf(v, 1):
		return "\u221e"
	case math.IsNaN(v):
		return "\u2013"
	}
	return fmt.Sprintf("%.*f", prec, v)
}

func decibels(v float64) string {
	if math.IsInf(v, 1) {
		return "\u221e (identical)"
	}
	return fnum(v, 2) + " dB"
}

func plusMinus(v, s float64, has bool) string {
	if !has || math.IsNaN(s) {
		return fnum(v, 3)
	}
	if math.IsInf(s, 0) {
		return fnum(v, 3) + " (undetermined)"
	}
	return fnum(v, 3) + " \u00b1 " + fnum(s, 3)
}

func rgbText(v [3]float64) string {
	return fnum(v[0], 3) + ", " + fnum(v[1], 3) + ", " + fnum(v[2], 3)
}

// swatchCSS is an sRGB colour for a segment's swatch: the diffuse albedo, or
// for a metal (no diffuse) its F0, encoded with the sRGB curve.
func swatchCSS(s materials.Segment) template.CSS {
	v := s.Diffuse
	if v[0]+v[1]+v[2] == 0 {
		v = s.Specular
	}
	var c [3]int
	for i := range c {
		c[i] = int(math.Round(255 * colour.LinearToSRGB(math.Max(0, math.Min(1, v[i])))))
	}
	return template.CSS(fmt.Sprintf("background-color: rgb(%d, %d, %d)", c[0], c[1], c[2]))
}

func shortHash(s string) string {
	if len(s) > 16 {
		return s[:16] + "\u2026"
	}
	return s
}
