package demo

import (
	"math"
	"testing"
)

// The measured mean and variance on flat regions must match the chosen
// Poisson-Gaussian parameters: mean v, variance v/FW + (sigma_r/FW)^2
// (the photon-transfer relation; common practice). With n samples the sample
// variance has relative standard error sqrt(2/(n-1)); test at 5 of those.
func TestSensorNoiseStatistics(t *testing.T) {
	s := DefaultSensor
	const n = 200000
	for _, v := range []float64{0.0005, 0.002, 0.05, 0.3, 0.9} {
		rng := newRNG(7, uint64(v*1e6))
		var sum, sum2 float64
		for i := 0; i < n; i++ {
			x := s.Apply(v, &rng)
			sum += x
			sum2 += x * x
		}
		mean := sum / n
		variance := (sum2 - sum*sum/n) / (n - 1)
		want := s.Variance(v)
		if se := math.Sqrt(want / n); math.Abs(mean-v) > 5*se {
			t.Errorf("v=%g: mean %g, want %g (5 standard errors = %g)", v, mean, v, 5*se)
		}
		if rel := math.Abs(variance-want) / want; rel > 5*math.Sqrt(2.0/(n-1)) {
			t.Errorf("v=%g: variance %g, model %g (%.2f%% apart)", v, variance, want, 100*rel)
		}
	}
}

func TestRNGDependsOnlyOnStream(t *testing.T) {
	a := newRNG(1, 2, 3)
	b := newRNG(1, 2, 3)
	c := newRNG(1, 3, 2)
	for i := 0; i < 10; i++ {
		x, y, z := a.uint64(), b.uint64(), c.uint64()
		if x != y {
			t.Fatal("same stream gives different numbers")
		}
		if x == z {
			t.Fatal("swapped stream keys give the same numbers")
		}
	}
}
