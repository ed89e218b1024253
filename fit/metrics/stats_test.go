package metrics

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"patina/render/refcheck"
)

// sortedPercentile is the textbook definition: sort, then interpolate
// linearly between the ranks floor(q/100 (n-1)) and the next.
func sortedPercentile(v []float64, q float64) float64 {
	s := slices.Clone(v)
	slices.Sort(s)
	pos := q / 100 * float64(len(s)-1)
	k := int(math.Floor(pos))
	if k >= len(s)-1 {
		return s[len(s)-1]
	}
	return s[k] + (pos-float64(k))*(s[k+1]-s[k])
}

func TestPercentileAgainstSorting(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for _, n := range []int{1, 2, 3, 10, 17, 100, 1001, 50000} {
		for _, kind := range []string{"uniform", "ties", "sorted", "reversed"} {
			v := make([]float32, n)
			for i := range v {
				switch kind {
				case "uniform":
					v[i] = rng.Float32() * 10
				case "ties":
					v[i] = float32(rng.IntN(4))
				case "sorted":
					v[i] = float32(i)
				case "reversed":
					v[i] = float32(n - i)
				}
			}
			f := make([]float64, n)
			for i, x := range v {
				f[i] = float64(x)
			}
			med, p95 := medianAndP95(slices.Clone(v))
			if want := sortedPercentile(f, 50); math.Abs(med-want) > 1e-12*(1+math.Abs(want)) {
				t.Errorf("n=%d %s: median %v, sorting gives %v", n, kind, med, want)
			}
			if want := sortedPercentile(f, 95); math.Abs(p95-want) > 1e-12*(1+math.Abs(want)) {
				t.Errorf("n=%d %s: p95 %v, sorting gives %v", n, kind, p95, want)
			}
			for _, q := range []float64{0, 5, 50, 95, 99.9, 100} {
				got := percentile(slices.Clone(v), q)
				if want := sortedPercentile(f, q); math.Abs(got-want) > 1e-12*(1+math.Abs(want)) {
					t.Errorf("n=%d %s q=%v: %v, sorting gives %v", n, kind, q, got, want)
				}
			}
		}
	}
}

// Cross-check with numpy.percentile (Debian python3-numpy), whose default
// method is the linear interpolation used here.
func TestPercentileAgainstNumpy(t *testing.T) {
	refcheck.RequirePython(t, map[string]string{"numpy": "python3-numpy"})
	rng := rand.New(rand.NewPCG(5, 6))
	v := make([]float32, 2345)
	for i := range v {
		v[i] = float32(rng.ExpFloat64())
	}
	qs := []float64{0, 1, 25, 50, 90, 95, 99, 99.9, 100}
	dir := t.TempDir()
	path := writeFloats(t, dir, "v.f32", v)
	qj, _ := json.Marshal(qs)
	out := refcheck.RunPython(t, `
import json, sys
import numpy as np
v = np.fromfile(sys.argv[1], dtype="<f4").astype(np.float64)
print(json.dumps([float(np.percentile(v, q)) for q in json.loads(sys.argv[2])]))
`, path, string(qj))
	var ref []float64
	if err := json.Unmarshal(out, &ref); err != nil {
		t.Fatal(err)
	}
	for i, q := range qs {
		if got := percentile(slices.Clone(v), q); math.Abs(got-ref[i]) > 1e-12*(1+ref[i]) {
			t.Errorf("percentile %v: %v, numpy %v", q, got, ref[i])
		}
	}
	_ = fmt.Sprint()
}
