package metrics

import (
	"math"
	"testing"

	"patina/render/colour"
)

// The table encoder against the IEC 61966-2-1 curve (colour.LinearToSRGB),
// densely and at the table's own breakpoints and knee.
func TestEncodeMatchesSRGBCurve(t *testing.T) {
	worst := 0.0
	check := func(v float64) {
		want := colour.LinearToSRGB(math.Min(1, math.Max(0, v)))
		d := math.Abs(encode(v) - want)
		worst = math.Max(worst, d)
		if d > 2e-9 {
			t.Fatalf("encode(%v) = %.12f, sRGB curve %.12f", v, encode(v), want)
		}
	}
	for i := -10; i <= 2000000; i++ {
		check(float64(i) / 1900000)
	}
	for e := -10; e <= 0; e++ {
		for _, m := range []float64{1, 1 + 1e-12, 1.5, 2 - 1e-12} {
			check(math.Ldexp(m, e))
		}
	}
	for _, v := range []float64{0.0031308, math.Nextafter(0.0031308, 1), 1, 2, -1} {
		check(v)
	}
	t.Logf("largest departure from the sRGB curve: %.3g", worst)
}

func BenchmarkEncode(b *testing.B) {
	b.ReportAllocs()
	s := 0.0
	for i := 0; i < b.N; i++ {
		s += encode(float64(i&4095) / 4096)
	}
	if s < 0 {
		b.Fatal(s)
	}
}
