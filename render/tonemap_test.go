package render

import (
	"math"
	"testing"
)

// TestToneMapExposureAndSRGB checks exposure in stops and the sRGB curve
// against IEC 61966-2-1 worked values: linear 0.18 encodes to 0.46135
// (computed from the standard's equation 1.055 L^(1/2.4) - 0.055).
func TestToneMapExposureAndSRGB(t *testing.T) {
	tm := ToneMap{ExposureEV: 1}
	if got := tm.Encode(0.09); math.Abs(got-0.461356) > 1e-5 {
		t.Fatalf("Encode(0.09) at +1 EV = %v, want 0.461356", got)
	}
	if got := (ToneMap{ExposureEV: -2}).Linear(2); got != 0.5 {
		t.Fatalf("2 at -2 EV = %v, want 0.5", got)
	}
	if got := (ToneMap{}).Encode(3); got != 1 {
		t.Fatalf("clip: Encode(3) = %v, want 1", got)
	}
}

// TestRollOffShoulder checks the roll-off curve: identity below the knee,
// continuous with slope 1 at the knee, increasing, and below 1.
func TestRollOffShoulder(t *testing.T) {
	tm := ToneMap{Highlight: RollOff}
	if tm.Linear(0.5) != 0.5 {
		t.Fatal("roll-off changed a value below the knee")
	}
	const h = 1e-6
	slope := (tm.Linear(RollOffKnee+h) - tm.Linear(RollOffKnee)) / h
	if math.Abs(slope-1) > 1e-5 {
		t.Fatalf("slope at the knee = %v, want 1", slope)
	}
	prev := 0.0
	for x := 0.01; x < 5; x *= 1.1 {
		y := tm.Linear(x)
		if y <= prev || y >= 1 {
			t.Fatalf("roll-off(%v) = %v: not increasing below 1 (previous %v)", x, y, prev)
		}
		prev = y
	}
}

// TestFilmVariance checks the film's mean and variance of the mean
// against the textbook formulas on known samples.
func TestFilmVariance(t *testing.T) {
	f, err := NewFilm(2, 1)
	if err != nil {
		t.Fatal(err)
	}
	vals := []float64{1, 2, 3, 6}
	for _, v := range vals {
		f.add(1, [3]float64{v, 2 * v, 0}, 1)
		f.add(0, [3]float64{5, 5, 5}, 0.5)
	}
	f.SPP = len(vals)
	L, a := f.Pixel(1, 0)
	if L[0] != 3 || L[1] != 6 || a != 1 {
		t.Fatalf("mean %v alpha %v", L, a)
	}
	// Sample variance of {1,2,3,6} is 14/3; of the mean, 14/12.
	v := f.Variance(1, 0)
	if math.Abs(v[0]-14.0/12) > 1e-12 || math.Abs(v[1]-4*14.0/12) > 1e-12 {
		t.Fatalf("variance %v, want %v and %v", v, 14.0/12, 56.0/12)
	}
	if v := f.Variance(0, 0); v[0] != 0 {
		t.Fatalf("constant pixel variance %v", v)
	}
	if _, a := f.Pixel(0, 0); a != 0.5 {
		t.Fatalf("alpha %v, want 0.5", a)
	}
	if _, err := NewFilm(1<<17, 1); err == nil {
		t.Fatal("oversized film accepted")
	}
}
