package demo

import "math"

// Sensor is a Poisson-Gaussian model of a camera sensor: a linear pixel value
// v in [0,1] of full scale collects v*FullWell photo-electrons with Poisson
// statistics, to which read noise of ReadNoise electrons (Gaussian) is added.
// The variance of the output in full-scale units is therefore
// v/FullWell + (ReadNoise/FullWell)^2, a straight line in v — the model that
// photon-transfer measurements of real sensors fit (common practice).
type Sensor struct {
	FullWell  float64 // electrons at full scale
	ReadNoise float64 // electrons, standard deviation
}

// DefaultSensor is a mid-range camera at base ISO (from memory: full wells of
// 20k to 60k electrons and read noise of 2 to 5 electrons are typical).
var DefaultSensor = Sensor{FullWell: 24000, ReadNoise: 3.5}

// Variance returns the predicted variance of the output at mean level v.
func (s Sensor) Variance(v float64) float64 {
	return v/s.FullWell + (s.ReadNoise/s.FullWell)*(s.ReadNoise/s.FullWell)
}

// Apply returns a noisy reading of the linear value v (not clipped). The
// random numbers come from the counter-based generator rng, so the result
// depends only on the seed and the pixel, never on the order of evaluation.
func (s Sensor) Apply(v float64, rng *counterRNG) float64 {
	if v < 0 {
		v = 0
	}
	lambda := v * s.FullWell
	e := poisson(lambda, rng)
	e += s.ReadNoise * rng.normal()
	return e / s.FullWell
}

// poisson draws a Poisson variate: by multiplication of uniforms (Knuth) for
// small means and by the normal approximation with continuity correction for
// large ones, where the two agree to well below the read noise.
func poisson(lambda float64, rng *counterRNG) float64 {
	if lambda <= 0 {
		return 0
	}
	if lambda < 40 {
		l := math.Exp(-lambda)
		k, p := 0.0, 1.0
		for {
			p *= rng.float()
			if p <= l {
				return k
			}
			k++
		}
	}
	return math.Max(0, math.Round(lambda+math.Sqrt(lambda)*rng.normal()))
}

// counterRNG is a small counter-based generator: the state is a key made from
// (seed, stream) and a counter, mixed with the SplitMix64 finaliser (Steele,
// Lea and Flood, OOPSLA 2014). Each pixel gets its own stream.
type counterRNG struct {
	key, ctr uint64
}

func newRNG(seed uint64, stream ...uint64) counterRNG {
	k := mix64(seed ^ 0x9e3779b97f4a7c15)
	for _, s := range stream {
		k = mix64(k ^ mix64(s+0x632be59bd9b4e019))
	}
	return counterRNG{key: k}
}

func mix64(z uint64) uint64 {
	z += 0x9e3779b97f4a7c15
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	return z ^ (z >> 31)
}

func (r *counterRNG) uint64() uint64 {
	r.ctr++
	return mix64(r.key + r.ctr*0xd1b54a32d192ed03)
}

// float returns a uniform number in (0, 1).
func (r *counterRNG) float() float64 {
	return (float64(r.uint64()>>11) + 0.5) / (1 << 53)
}

// normal returns a standard normal variate (Box-Muller).
func (r *counterRNG) normal() float64 {
	u1, u2 := r.float(), r.float()
	return math.Sqrt(-2*math.Log(u1)) * math.Cos(2*math.Pi*u2)
}
