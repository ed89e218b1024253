package brdf

import (
	"math"
	"testing"
)

// Presets carry their optical constants and their F0 follows from them by
// the normal-incidence Fresnel formulas; spot values are computed by hand
// from the published constants:
//   - silver at 548.6 nm, n = 0.06, k = 3.586 (Johnson and Christy 1972):
//     ((0.94)^2 + 3.586^2) / ((1.06)^2 + 3.586^2) = 0.98284
//   - N-BK7, nd = 1.5168 (SCHOTT): (0.5168 / 2.5168)^2 = 0.042165
//   - water, 1.3334 (Daimon and Masumura 2007): (0.3334 / 2.3334)^2 = 0.020415
func TestPresets(t *testing.T) {
	ps := Presets()
	if len(ps) < 8 {
		t.Fatalf("%d presets", len(ps))
	}
	seen := map[string]bool{}
	for _, p := range ps {
		if seen[p.Name] {
			t.Errorf("duplicate preset %q", p.Name)
		}
		seen[p.Name] = true
		if p.Source == "" {
			t.Errorf("%s: no source", p.Name)
		}
		if err := p.Params.Validate(); err != nil {
			t.Errorf("%s: %v", p.Name, err)
		}
		switch p.Params.Kind {
		case Metal:
			for c := 0; c < 3; c++ {
				rs, _ := FresnelConductor(1, p.N[c], p.K[c])
				if math.Abs(p.Params.Specular[c]-rs) > 1e-12 {
					t.Errorf("%s channel %d: F0 %g, Fresnel at normal incidence %g", p.Name, c, p.Params.Specular[c], rs)
				}
			}
		case Dielectric:
			rs, _ := FresnelDielectric(1, p.IOR)
			if math.Abs(p.Params.Specular[0]-rs) > 1e-12 {
				t.Errorf("%s: F0 %g, Fresnel at normal incidence %g", p.Name, p.Params.Specular[0], rs)
			}
		default:
			t.Errorf("%s: kind %s", p.Name, p.Params.Kind)
		}
		q, ok := PresetByName(p.Name)
		if !ok || q.Name != p.Name {
			t.Errorf("PresetByName(%q) = %v, %v", p.Name, q.Name, ok)
		}
	}
	for _, tc := range []struct {
		name string
		ch   int
		want float64
	}{{"silver", 1, 0.98284}, {"glass-n-bk7", 0, 0.042165}, {"water", 0, 0.020415}, {"plastic", 0, 0.04}} {
		p, _ := PresetByName(tc.name)
		if got := p.Params.Specular[tc.ch]; math.Abs(got-tc.want) > 6e-5*tc.want {
			t.Errorf("%s F0[%d] = %.6f, want %.6f", tc.name, tc.ch, got, tc.want)
		}
	}
	// Gold is yellow: red reflects more than blue (Johnson and Christy 1972).
	g, _ := PresetByName("gold")
	if !(g.Params.Specular[0] > g.Params.Specular[1] && g.Params.Specular[1] > g.Params.Specular[2]) {
		t.Errorf("gold F0 %v not ordered R > G > B", g.Params.Specular)
	}
	if _, ok := PresetByName("unobtainium"); ok {
		t.Error("PresetByName found an unknown name")
	}
	// The returned slice is a copy.
	ps[0].Name = "changed"
	if Presets()[0].Name == "changed" {
		t.Error("Presets returned the internal table")
	}
}
