package brdf

import "math"

// Fast sine and cosine of 2 pi u for the samplers. math.Sincos costs about
// as much as the rest of Sample together; sampling only needs the pair to
// a few ulps, so a table of 256 exact values plus the short Taylor series
// of the remaining angle does the job in a fraction of the time. The angle
// is rounded to the nearest table entry, so the rest is |x| <= pi / 256
// and the first omitted terms of the series, x^7/7! and x^8/8!, are below
// 1e-17. The table is filled with math.Sincos, so results are the same on
// every run.

const sinCosN = 256

var sinCosTable = func() (t [sinCosN][2]float64) {
	// Evaluate only the first octant, where the rounded argument is
	// closest to the true angle, and fill the rest by symmetry.
	const q = sinCosN / 4
	for k := 0; k <= q/2; k++ {
		s, c := math.Sincos(2 * math.Pi * float64(k) / sinCosN)
		t[k] = [2]float64{s, c}
		t[q-k] = [2]float64{c, s}
	}
	for k := 0; k < q; k++ {
		s, c := t[k][0], t[k][1]
		t[k+q] = [2]float64{c, -s}
		t[k+2*q] = [2]float64{-s, -c}
		t[k+3*q] = [2]float64{-c, s}
	}
	return
}()

// sincos2pi returns sin(2 pi u) and cos(2 pi u). Any finite u works (the
// functions are periodic); NaN gives NaN.
func sincos2pi(u float64) (s, c float64) {
	x := u * sinCosN
	i := int(x + 0.5) // the nearest entry: truncation is floor for x >= -0.5
	if float64(i) > x+0.5 {
		i-- // floor below
	}
	d := x - float64(i) // in [-0.5, 0.5]; the angle is 2 pi (i + d) / N
	t := &sinCosTable[i&(sinCosN-1)]
	r := d * (2 * math.Pi / sinCosN)
	z := r * r
	sr := r * (1 + z*(-1.0/6+z*(1.0/120)))
	cr := 1 + z*(-1.0/2+z*(1.0/24+z*(-1.0/720)))
	return t[0]*cr + t[1]*sr, t[1]*cr - t[0]*sr
}
