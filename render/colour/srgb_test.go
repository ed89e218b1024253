package colour

import (
	"math"
	"testing"
)

// IEC 61966-2-1:1999 constants and worked values; the two branches of each
// curve meet only to about 3e-9 (REFERENCES.md), so the join is tested with a
// tolerance.
func TestSRGBBranchesMeet(t *testing.T) {
	lo := srgbDecodeKnee / 12.92
	hi := math.Pow((srgbDecodeKnee+0.055)/1.055, 2.4)
	if d := math.Abs(lo - hi); d > 1e-8 {
		t.Errorf("decode branches differ by %g at 0.04045", d)
	}
	lo = 12.92 * srgbEncodeKnee
	hi = 1.055*math.Pow(srgbEncodeKnee, 1/2.4) - 0.055
	if d := math.Abs(lo - hi); d > 5e-8 { // in encoded units the gap is ~2.9e-8
		t.Errorf("encode branches differ by %g at 0.0031308", d)
	}
}

func TestSRGBWorkedValues(t *testing.T) {
	// Values computed by hand from the IEC 61966-2-1 equations.
	cases := []struct{ enc, lin float64 }{
		{0, 0},
		{1, 1},
		{0.04045, 0.04045 / 12.92},
		{0.5, math.Pow((0.5+0.055)/1.055, 2.4)}, // 0.21404114...
		{0.735356983, 0.5},                      // 1.055*0.5^(1/2.4)-0.055, common practice: mid-grey code
	}
	for _, c := range cases {
		if got := SRGBToLinear(c.enc); math.Abs(got-c.lin) > 1e-8 {
			t.Errorf("SRGBToLinear(%v) = %v, want %v", c.enc, got, c.lin)
		}
		if got := LinearToSRGB(c.lin); math.Abs(got-c.enc) > 1e-7 { // the branches meet to ~3e-8 in the encoded value
			t.Errorf("LinearToSRGB(%v) = %v, want %v", c.lin, got, c.enc)
		}
	}
	if got := SRGBToLinear(0.5); math.Abs(got-0.214041140) > 1e-8 {
		t.Errorf("SRGBToLinear(0.5) = %.9f, want 0.214041140 (from memory)", got)
	}
}

func TestSRGBRoundTripAndLUT(t *testing.T) {
	for i := 0; i < 256; i++ {
		v := float64(i) / 255
		if d := math.Abs(LinearToSRGB(SRGBToLinear(v)) - v); d > 1e-12 {
			t.Fatalf("round trip at %d off by %g", i, d)
		}
		if d := math.Abs(float64(SRGB8ToLinear(uint8(i))) - SRGBToLinear(v)); d > 1e-7 {
			t.Fatalf("LUT at %d off by %g", i, d)
		}
	}
}

// The matrix derived from the primaries must match the four-decimal matrix
// printed in IEC 61966-2-1.
func TestRGBToXYZMatchesStandard(t *testing.T) {
	want := [3][3]float64{
		{0.4124, 0.3576, 0.1805},
		{0.2126, 0.7152, 0.0722},
		{0.0193, 0.1192, 0.9505},
	}
	got := RGBToXYZMatrix()
	for r := 0; r < 3; r++ {
		for c := 0; c < 3; c++ {
			if math.Abs(got[r][c]-want[r][c]) > 0.6e-4 {
				t.Errorf("M[%d][%d] = %.6f, standard prints %.4f", r, c, got[r][c], want[r][c])
			}
		}
	}
	x, y, z := LinearRGBToXYZ(1, 1, 1)
	if math.Abs(x-D65[0]) > 1e-12 || math.Abs(y-1) > 1e-12 || math.Abs(z-D65[2]) > 1e-12 {
		t.Errorf("white maps to %v %v %v, want D65 %v", x, y, z, D65)
	}
	r, g, b := XYZToLinearRGB(LinearRGBToXYZ(0.2, 0.5, 0.7))
	if math.Abs(r-0.2)+math.Abs(g-0.5)+math.Abs(b-0.7) > 1e-12 {
		t.Errorf("inverse round trip gives %v %v %v", r, g, b)
	}
}
