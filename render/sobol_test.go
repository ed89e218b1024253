package render

import (
	"fmt"
	"strconv"
	"strings"
	"testing"

	"patina/render/refcheck"
)

// TestSobolMatchesSciPy checks the unscrambled Sobol points of dimensions
// 0..3 against scipy.stats.qmc.Sobol (Joe and Kuo's direction numbers),
// which emits points in Gray-code order: its point i is ours at index
// i ^ (i >> 1).
func TestSobolMatchesSciPy(t *testing.T) {
	refcheck.RequirePython(t, map[string]string{"scipy": "python3-scipy"})
	out := refcheck.RunPython(t, `
from scipy.stats import qmc
p = qmc.Sobol(d=4, scramble=False).random_base2(m=10)
for row in p:
    print(" ".join(repr(float(v)) for v in row))
`)
	lines := strings.Split(strings.TrimSpace(string(out)), "\n")
	if len(lines) != 1024 {
		t.Fatalf("scipy printed %d lines, want 1024", len(lines))
	}
	for i, line := range lines {
		f := strings.Fields(line)
		g := uint32(i ^ (i >> 1))
		for d := 0; d < sobolDims; d++ {
			want, err := strconv.ParseFloat(f[d], 64)
			if err != nil {
				t.Fatal(err)
			}
			if got := float64(sobol(g, d)) * inv32; got != want {
				t.Fatalf("point %d dim %d: got %v, scipy %v", i, d, got, want)
			}
		}
	}
}

// TestScrambledPairsAreNets checks that the first 2^m pairs of every
// Get2D group form a (0,m,2)-net in base 2: each elementary interval of
// area 2^-m holds exactly one point. The first two Sobol dimensions are a
// (0,2)-sequence (Sobol 1967) and Owen scrambling preserves the net
// property (Owen, "Randomly permuted (t,m,s)-nets and (t,s)-sequences",
// 1995); Burley's index shuffle keeps aligned blocks of 2^m indices.
func TestScrambledPairsAreNets(t *testing.T) {
	var s Sampler
	for _, m := range []int{4, 7, 10} {
		n := 1 << m
		for group := 0; group < 5; group++ {
			xs, ys := make([]float64, n), make([]float64, n)
			for i := 0; i < n; i++ {
				s.Start(42, 17, 3, uint32(i))
				for g := 0; g < group; g++ {
					s.Get2D()
				}
				xs[i], ys[i] = s.Get2D()
			}
			for k := 0; k <= m; k++ {
				seen := make(map[[2]int]bool, n)
				for i := 0; i < n; i++ {
					c := [2]int{int(xs[i] * float64(int(1)<<k)), int(ys[i] * float64(int(1)<<(m-k)))}
					if seen[c] {
						t.Fatalf("m=%d group %d: interval %d x %d holds two points (%v)", m, group, 1<<k, 1<<(m-k), c)
					}
					seen[c] = true
				}
			}
		}
	}
}

// TestSamplerDeterministicAndDecorrelated checks that the numbers depend
// only on (seed, pixel, index) and that neighbouring pixels and seeds get
// different sequences.
func TestSamplerDeterministicAndDecorrelated(t *testing.T) {
	var a, b Sampler
	seq := func(s *Sampler, seed uint64, x, y int) string {
		var sb strings.Builder
		for i := 0; i < 4; i++ {
			s.Start(seed, x, y, uint32(i))
			u, v := s.Get2D()
			w := s.Get3D()
			fmt.Fprintf(&sb, "%v %v %v %v ", u, v, w, s.Get1D())
		}
		return sb.String()
	}
	if seq(&a, 1, 5, 6) != seq(&b, 1, 5, 6) {
		t.Fatal("same seed and pixel gave different numbers")
	}
	if seq(&a, 1, 5, 6) == seq(&b, 1, 6, 5) || seq(&a, 1, 5, 6) == seq(&b, 2, 5, 6) {
		t.Fatal("different pixels or seeds gave the same numbers")
	}
	// Mean of many pixels' first sample is close to 1/2 (uniformity across
	// pixels: 4096 independent uniforms have standard error 0.0045).
	sum := 0.0
	for p := 0; p < 4096; p++ {
		a.Start(9, p%64, p/64, 0)
		u, _ := a.Get2D()
		sum += u
	}
	if m := sum / 4096; m < 0.5-4*0.0045 || m > 0.5+4*0.0045 {
		t.Fatalf("mean of first samples over pixels = %v, want 0.5 within 4 standard errors", m)
	}
}
