package render

import (
	"context"
	"math"
	"slices"
	"testing"

	"patina/brdf"
)

// adaptiveScene is the glossy test scene under a small sphere lamp and its
// environment: matte, glossy and environment-lit pixels whose noise
// differs by orders of magnitude.
func adaptiveScene(t *testing.T) (*Scene, Camera, *Lights, []brdf.Params) {
	sc, cam, lights, mats := glossyScene(t)
	l := *lights
	l.Lights = []Light{{Kind: SphereLight, Position: Vec3{1, -1, 2}, Radius: 0.2, Intensity: brdf.RGB{2, 2, 2}}}
	return sc, cam, &l, mats
}

func renderAdaptive(t *testing.T, threads int, a *Adaptive, spp int) *Film {
	t.Helper()
	sc, cam, lights, mats := adaptiveScene(t)
	f, err := Render(context.Background(), sc, cam, lights, mats, Settings{SPP: spp, MaxDepth: 3, Threads: threads, TileSize: 5, Seed: 31, Adaptive: a})
	if err != nil {
		t.Fatal(err)
	}
	return f
}

// TestAdaptiveStopsWhereQuiet checks what Adaptive promises: every pixel
// has between MinSPP and SPP samples; a pixel left at MinSPP has an
// estimated variance of its mean at most the target (its own estimate was
// part of the rule at every allotment, and it took no sample after); the
// pixels differ in their counts, and fewer samples are taken than without
// it.
func TestAdaptiveStopsWhereQuiet(t *testing.T) {
	a := &Adaptive{MinSPP: 4, Variance: 2e-4}
	f := renderAdaptive(t, 2, a, 64)
	if !f.Adaptive() || f.SPP != 64 {
		t.Fatalf("film adaptive %v, SPP %d; want true, 64", f.Adaptive(), f.SPP)
	}
	lo, hi, total := math.MaxInt, 0, 0
	for y := 0; y < f.Height; y++ {
		for x := 0; x < f.Width; x++ {
			n := f.Samples(x, y)
			lo, hi, total = min(lo, n), max(hi, n), total+n
			if n < a.MinSPP || n > 64 {
				t.Fatalf("pixel (%d,%d) has %d samples, want %d..64", x, y, n, a.MinSPP)
			}
			if n == a.MinSPP {
				v := f.Variance(x, y)
				if m := (v[0] + v[1] + v[2]) / 3; m > a.Variance*(1+1e-9) {
					t.Errorf("pixel (%d,%d) stopped at %d samples with variance %.3g above the target %.3g", x, y, n, m, a.Variance)
				}
			}
		}
	}
	t.Logf("samples per pixel %d..%d, mean %.1f", lo, hi, float64(total)/float64(f.Width*f.Height))
	if lo == hi || total >= 64*f.Width*f.Height {
		t.Errorf("samples per pixel %d..%d, %d in all: want pixels that stop early and others that do not", lo, hi, total)
	}
}

// TestAdaptiveSameAsUniform: a pixel given n samples has exactly its value
// in a render of n samples per pixel (samples depend on seed, pixel and
// index alone), and the adaptive film is the same on one and two threads.
func TestAdaptiveSameAsUniform(t *testing.T) {
	a := &Adaptive{MinSPP: 3, Variance: 5e-4}
	f1 := renderAdaptive(t, 1, a, 20)
	f2 := renderAdaptive(t, 2, a, 20)
	p1, p2 := append(f1.RGB(), f1.Alpha()...), append(f2.RGB(), f2.Alpha()...)
	for i := range p1 {
		if math.Float32bits(p1[i]) != math.Float32bits(p2[i]) {
			t.Fatalf("value %d differs: %v on 1 thread, %v on 2", i, p1[i], p2[i])
		}
	}
	byCount := map[int][][2]int{}
	for y := 0; y < f1.Height; y++ {
		for x := 0; x < f1.Width; x++ {
			if f1.Samples(x, y) != f2.Samples(x, y) {
				t.Fatalf("pixel (%d,%d): %d samples on 1 thread, %d on 2", x, y, f1.Samples(x, y), f2.Samples(x, y))
			}
			n := f1.Samples(x, y)
			byCount[n] = append(byCount[n], [2]int{x, y})
		}
	}
	if len(byCount) < 2 {
		t.Fatalf("every pixel has the same count: %v", byCount)
	}
	for n, px := range byCount {
		u := renderAdaptive(t, 2, nil, n)
		for _, p := range px {
			a, aa := f1.Pixel(p[0], p[1])
			b, ba := u.Pixel(p[0], p[1])
			if a != b || aa != ba || f1.Variance(p[0], p[1]) != u.Variance(p[0], p[1]) {
				t.Fatalf("pixel %v with %d samples: %v %v adaptive, %v %v at %d spp", p, n, a, aa, b, ba, n)
			}
		}
	}
}

// TestAdaptiveAgreesWithUniform: stopping early leaves the image an
// estimate of the same thing: block means of an adaptive render agree with
// a long uniform render within 4.5 combined standard errors (as in
// TestStrategiesAgree), the standard errors from the adaptive film's own
// per-pixel variances.
func TestAdaptiveAgreesWithUniform(t *testing.T) {
	ad := renderAdaptive(t, 2, &Adaptive{MinSPP: 8, Variance: 1e-3}, 64)
	ref := renderAdaptive(t, 2, nil, 256)
	for by := 0; by < 18; by += 6 {
		for bx := 0; bx < 24; bx += 6 {
			mm, vm := ref.MeanVariance(bx, by, bx+6, by+6)
			m, v := ad.MeanVariance(bx, by, bx+6, by+6)
			for c := 0; c < 3; c++ {
				if !within(m[c], mm[c], v[c]+vm[c], 4.5) {
					t.Errorf("block (%d,%d) channel %d: adaptive %.5f, uniform %.5f (standard error %.2g)", bx, by, c, m[c], mm[c], math.Sqrt(v[c]+vm[c]))
				}
			}
		}
	}
}

// TestAdaptiveSettingsChecked: an adaptive rule that cannot work is an
// error, not a silent uniform render.
func TestAdaptiveSettingsChecked(t *testing.T) {
	sc, cam, lights, mats := adaptiveScene(t)
	for _, a := range []*Adaptive{{MinSPP: 1, Variance: 1}, {MinSPP: 4}, {MinSPP: 4, Variance: math.NaN()}, {MinSPP: 4, Variance: math.Inf(1)}} {
		if _, err := Render(context.Background(), sc, cam, lights, mats, Settings{SPP: 8, Adaptive: a}); err == nil {
			t.Errorf("adaptive %+v accepted", *a)
		}
	}
}

// TestAllot checks the allotment against a direct evaluation of its rule
// on a film of known sums: per-sample variance s^2 of every pixel (mean of
// the channels), the larger of its own and its clipped 3x3 neighbourhood's
// mean, N = ceil(s^2 / Variance) within [MinSPP, SPP].
func TestAllot(t *testing.T) {
	const w, h, n = 7, 5, 6
	f, err := NewFilm(w, h)
	if err != nil {
		t.Fatal(err)
	}
	f.count = make([]int32, w*h)
	// Pixel i takes n samples alternating m-d and m+d in every channel:
	// sample variance d^2 n/(n-1).
	d := func(i int) float64 { return 0.01 * float64((i*37)%11) }
	for i := 0; i < w*h; i++ {
		for k := 0; k < n; k++ {
			v := 1 + d(i)*float64(2*(k%2)-1)
			f.add(i, brdf.RGB{v, v, v}, 1)
		}
	}
	f.SPP = n
	a := &Adaptive{MinSPP: 3, Variance: 2e-5}
	goal, more := allot(f, nil, a, 40, 2)
	var wantMore int64
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			s2 := func(x, y int) float64 { return d(y*w+x) * d(y*w+x) * n / (n - 1) }
			var sum float64
			cnt := 0
			for yy := y - 1; yy <= y+1; yy++ {
				for xx := x - 1; xx <= x+1; xx++ {
					if xx >= 0 && yy >= 0 && xx < w && yy < h {
						sum += s2(xx, yy)
						cnt++
					}
				}
			}
			v := math.Max(s2(x, y), sum/float64(cnt))
			want := int32(min(40, max(3, int(math.Ceil(v/a.Variance-1e-9)))))
			if got := goal[y*w+x]; got != want {
				t.Errorf("pixel (%d,%d): goal %d, want %d (s^2 %.4g)", x, y, got, want, v)
			}
			if want > n {
				wantMore += int64(want - n)
			}
		}
	}
	if more != wantMore {
		t.Errorf("%d samples to take, want %d", more, wantMore)
	}
	// The same on one thread and on more threads than rows.
	for _, th := range []int{1, 9} {
		g, m := allot(f, nil, a, 40, th)
		if m != more || !slices.Equal(g, goal) {
			t.Errorf("%d threads: goals differ from 2 threads' (%d and %d samples to take)", th, m, more)
		}
	}
}
