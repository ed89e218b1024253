package colour

import (
	"encoding/json"
	"math/rand/v2"
	"os"
	"path/filepath"

	"math"
	"patina/render/refcheck"
	"testing"
)

// sharmaTable1 is Table 1 of Sharma, Wu and Dalal, "The CIEDE2000
// color-difference formula: implementation notes, supplementary test data,
// and mathematical observations", Color Res. Appl. 30(1):21-30, 2005:
// L1 a1 b1, L2 a2 b2, and the published Delta E 2000 to four decimals.
var sharmaTable1 = []struct {
	l1, l2 Lab
	de     float64
}{
	{Lab{50, 2.6772, -79.7751}, Lab{50, 0, -82.7485}, 2.0425},
	{Lab{50, 3.1571, -77.2803}, Lab{50, 0, -82.7485}, 2.8615},
	{Lab{50, 2.8361, -74.0200}, Lab{50, 0, -82.7485}, 3.4412},
	{Lab{50, -1.3802, -84.2814}, Lab{50, 0, -82.7485}, 1.0000},
	{Lab{50, -1.1848, -84.8006}, Lab{50, 0, -82.7485}, 1.0000},
	{Lab{50, -0.9009, -85.5211}, Lab{50, 0, -82.7485}, 1.0000},
	{Lab{50, 0, 0}, Lab{50, -1, 2}, 2.3669},
	{Lab{50, -1, 2}, Lab{50, 0, 0}, 2.3669},
	{Lab{50, 2.49, -0.001}, Lab{50, -2.49, 0.0009}, 7.1792},
	{Lab{50, 2.49, -0.001}, Lab{50, -2.49, 0.0010}, 7.1792},
	{Lab{50, 2.49, -0.001}, Lab{50, -2.49, 0.0011}, 7.2195},
	{Lab{50, 2.49, -0.001}, Lab{50, -2.49, 0.0012}, 7.2195},
	{Lab{50, -0.001, 2.49}, Lab{50, 0.0009, -2.49}, 4.8045},
	{Lab{50, -0.001, 2.49}, Lab{50, 0.0010, -2.49}, 4.8045},
	{Lab{50, -0.001, 2.49}, Lab{50, 0.0011, -2.49}, 4.7461},
	{Lab{50, 2.5, 0}, Lab{50, 0, -2.5}, 4.3065},
	{Lab{50, 2.5, 0}, Lab{73, 25, -18}, 27.1492},
	{Lab{50, 2.5, 0}, Lab{61, -5, 29}, 22.8977},
	{Lab{50, 2.5, 0}, Lab{56, -27, -3}, 31.9030},
	{Lab{50, 2.5, 0}, Lab{58, 24, 15}, 19.4535},
	{Lab{50, 2.5, 0}, Lab{50, 3.1736, 0.5854}, 1.0000},
	{Lab{50, 2.5, 0}, Lab{50, 3.2972, 0}, 1.0000},
	{Lab{50, 2.5, 0}, Lab{50, 1.8634, 0.5757}, 1.0000},
	{Lab{50, 2.5, 0}, Lab{50, 3.2592, 0.3350}, 1.0000},
	{Lab{60.2574, -34.0099, 36.2677}, Lab{60.4626, -34.1751, 39.4387}, 1.2644},
	{Lab{63.0109, -31.0961, -5.8663}, Lab{62.8187, -29.7946, -4.0864}, 1.2630},
	{Lab{61.2901, 3.7196, -5.3901}, Lab{61.4292, 2.2480, -4.9620}, 1.8731},
	{Lab{35.0831, -44.1164, 3.7933}, Lab{35.0232, -40.0716, 1.5901}, 1.8645},
	{Lab{22.7233, 20.0904, -46.6940}, Lab{23.0331, 14.9730, -42.5619}, 2.0373},
	{Lab{36.4612, 47.8580, 18.3852}, Lab{36.2715, 50.5065, 21.2231}, 1.4146},
	{Lab{90.8027, -2.0831, 1.4410}, Lab{91.1528, -1.6435, 0.0447}, 1.4441},
	{Lab{90.9257, -0.5406, -0.9208}, Lab{88.6381, -0.8985, -0.7239}, 1.5381},
	{Lab{6.7747, -0.2908, -2.4247}, Lab{5.8714, -0.0985, -2.2286}, 0.6377},
	{Lab{2.0776, 0.0795, -1.1350}, Lab{0.9033, -0.0636, -0.5514}, 0.9082},
}

// The published values are rounded to four decimals, so a correct
// implementation is within 0.5e-4 of each; 1e-4 is the tolerance the issue
// asks for. Pair 10 (hues exactly 180 degrees apart) is the one scikit-image
// 0.19.3 gets wrong (it returns 7.2195); the published table is the reference.
func TestDeltaE2000SharmaTable1(t *testing.T) {
	if len(sharmaTable1) != 34 {
		t.Fatalf("table has %d pairs, Sharma et al. Table 1 has 34", len(sharmaTable1))
	}
	for i, p := range sharmaTable1 {
		if got := DeltaE2000(p.l1, p.l2); math.Abs(got-p.de) > 1e-4 {
			t.Errorf("pair %d: DeltaE2000(%v, %v) = %.6f, Sharma et al. 2005 Table 1: %.4f", i+1, p.l1, p.l2, got, p.de)
		}
		if got := DeltaE2000(p.l2, p.l1); math.Abs(got-p.de) > 1e-4 {
			t.Errorf("pair %d reversed: DeltaE2000(%v, %v) = %.6f, Sharma et al. 2005 Table 1: %.4f", i+1, p.l2, p.l1, got, p.de)
		}
	}
}

// Properties of any colour difference: zero for equal colours, positive and
// symmetric otherwise; a pure lightness difference at L* = 50 (where
// S_L = 1) equals |dL*| (CIE 142-2001, eq. for S_L).
func TestDeltaE2000Properties(t *testing.T) {
	for _, p := range sharmaTable1 {
		if d := DeltaE2000(p.l1, p.l1); d != 0 {
			t.Errorf("DeltaE2000(c, c) = %g for %v", d, p.l1)
		}
	}
	for _, dl := range []float64{0.5, 1, 3} {
		a := Lab{50 - dl/2, 10, -20}
		b := Lab{50 + dl/2, 10, -20}
		// S_L at the mean lightness 50 is exactly 1.
		if got := DeltaE2000(a, b); math.Abs(got-dl) > 1e-12 {
			t.Errorf("lightness-only difference %v at L*=50 gives %v", dl, got)
		}
	}
	if got := DeltaE2000(Lab{0, 0, 0}, Lab{100, 0, 0}); math.IsNaN(got) || got <= 0 {
		t.Errorf("black to white gives %v", got)
	}
}

func BenchmarkDeltaE2000(b *testing.B) {
	b.ReportAllocs()
	s := 0.0
	for i := 0; i < b.N; i++ {
		p := sharmaTable1[i%len(sharmaTable1)]
		s += DeltaE2000(p.l1, p.l2)
	}
	if s < 0 {
		b.Fatal(s)
	}
}

// deltaE2000Direct is CIEDE2000 written the way Sharma et al. (2005) print
// it, eq. 1-22, with hue angles and four cosines, to hold the vector form of
// DeltaE2000 to the literal equations on arbitrary colours.
func deltaE2000Direct(l1, l2 Lab) float64 {
	deg := math.Pi / 180
	c1 := math.Hypot(l1.A, l1.B)
	c2 := math.Hypot(l2.A, l2.B)
	cm := (c1 + c2) / 2
	g := 0.5 * (1 - math.Sqrt(math.Pow(cm, 7)/(math.Pow(cm, 7)+math.Pow(25, 7))))
	a1, a2 := (1+g)*l1.A, (1+g)*l2.A
	cp1, cp2 := math.Hypot(a1, l1.B), math.Hypot(a2, l2.B)
	hue := func(b, a float64) float64 {
		if a == 0 && b == 0 {
			return 0
		}
		h := math.Atan2(b, a) / deg
		if h < 0 {
			h += 360
		}
		return h
	}
	h1, h2 := hue(l1.B, a1), hue(l2.B, a2)
	dL, dC := l2.L-l1.L, cp2-cp1
	var dh float64
	if cp1*cp2 != 0 {
		dh = h2 - h1
		if dh > 180 {
			dh -= 360
		} else if dh < -180 {
			dh += 360
		}
	}
	dH := 2 * math.Sqrt(cp1*cp2) * math.Sin(dh/2*deg)
	lm, cpm := (l1.L+l2.L)/2, (cp1+cp2)/2
	hm := h1 + h2
	if cp1*cp2 != 0 {
		switch {
		case math.Abs(h1-h2) <= 180:
			hm /= 2
		case h1+h2 < 360:
			hm = (h1 + h2 + 360) / 2
		default:
			hm = (h1 + h2 - 360) / 2
		}
	}
	tt := 1 - 0.17*math.Cos((hm-30)*deg) + 0.24*math.Cos(2*hm*deg) + 0.32*math.Cos((3*hm+6)*deg) - 0.20*math.Cos((4*hm-63)*deg)
	dTheta := 30 * math.Exp(-math.Pow((hm-275)/25, 2))
	rc := 2 * math.Sqrt(math.Pow(cpm, 7)/(math.Pow(cpm, 7)+math.Pow(25, 7)))
	sl := 1 + 0.015*math.Pow(lm-50, 2)/math.Sqrt(20+math.Pow(lm-50, 2))
	sc := 1 + 0.045*cpm
	sh := 1 + 0.015*cpm*tt
	rt := -math.Sin(2*dTheta*deg) * rc
	return math.Sqrt(math.Pow(dL/sl, 2) + math.Pow(dC/sc, 2) + math.Pow(dH/sh, 2) + rt*(dC/sc)*(dH/sh))
}

// randomLabPairs draws colour pairs over the whole CIELAB range and pairs of
// near neighbours (the differences an error map mostly shows), plus
// achromatic colours.
func randomLabPairs(n int) [][2]Lab {
	rng := rand.New(rand.NewPCG(1, 2))
	lab := func() Lab { return Lab{rng.Float64() * 100, rng.Float64()*200 - 100, rng.Float64()*200 - 100} }
	var out [][2]Lab
	for i := 0; i < n; i++ {
		a := lab()
		switch i % 4 {
		case 0:
			out = append(out, [2]Lab{a, lab()})
		case 1, 2:
			s := math.Pow(10, -3+4*rng.Float64())
			out = append(out, [2]Lab{a, {a.L + s*rng.NormFloat64(), a.A + s*rng.NormFloat64(), a.B + s*rng.NormFloat64()}})
		default:
			out = append(out, [2]Lab{{a.L, 0, 0}, {a.L + rng.NormFloat64(), rng.NormFloat64(), 0}})
		}
	}
	return out
}

// The vector form of DeltaE2000 against the literal equations of Sharma et
// al. (2005) on random colours.
func TestDeltaE2000AgainstLiteralEquations(t *testing.T) {
	for _, p := range randomLabPairs(200000) {
		got, want := DeltaE2000(p[0], p[1]), deltaE2000Direct(p[0], p[1])
		if math.Abs(got-want) > 1e-9*(1+want) {
			t.Fatalf("DeltaE2000(%v, %v) = %.12g, literal equations give %.12g", p[0], p[1], got, want)
		}
	}
}

// Cross-check against scikit-image's deltaE_ciede2000 (Debian
// python3-skimage 0.19) on random pairs. Away from the hue discontinuity,
// where scikit-image departs from the published data (pair 10 of Sharma et
// al. Table 1), both must agree to rounding.
func TestDeltaE2000AgainstSkimage(t *testing.T) {
	refcheck.RequirePython(t, map[string]string{"skimage": "python3-skimage", "numpy": "python3-numpy"})
	pairs := randomLabPairs(4000)
	flat := make([][6]float64, len(pairs))
	for i, p := range pairs {
		flat[i] = [6]float64{p[0].L, p[0].A, p[0].B, p[1].L, p[1].A, p[1].B}
	}
	arg, _ := json.Marshal(flat)
	in := filepath.Join(t.TempDir(), "pairs.json")
	if err := os.WriteFile(in, arg, 0o644); err != nil {
		t.Fatal(err)
	}
	out := refcheck.RunPython(t, `
import json, sys
import numpy as np
from skimage.color import deltaE_ciede2000
p = np.array(json.load(open(sys.argv[1])), dtype=np.float64)
print(json.dumps(deltaE_ciede2000(p[:, :3], p[:, 3:]).tolist()))
`, in)
	var ref []float64
	if err := json.Unmarshal(out, &ref); err != nil || len(ref) != len(pairs) {
		t.Fatalf("reading scikit-image output (%v): %.200s", err, out)
	}
	for i, p := range pairs {
		if got := DeltaE2000(p[0], p[1]); math.Abs(got-ref[i]) > 1e-9*(1+ref[i]) {
			t.Errorf("DeltaE2000(%v, %v) = %.12g, scikit-image deltaE_ciede2000 %.12g", p[0], p[1], got, ref[i])
		}
	}
}

func TestSinSmall(t *testing.T) {
	for i := 0; i <= 100000; i++ {
		x := math.Pi / 3 * float64(i) / 100000
		if d := math.Abs(sinSmall(x) - math.Sin(x)); d > 4.5e-16 { // two units in the last place near 1
			t.Fatalf("sinSmall(%v) off math.Sin by %g", x, d)
		}
	}
}
