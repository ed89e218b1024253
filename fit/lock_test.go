package fit

import (
	"context"
	"errors"
	"math"
	"testing"

	"patina/brdf"
)

// TestLockHoldsValue fits noise-free observations rendered by the test's
// own glTF 2.0 Appendix B model (synth_test.go) with one parameter group
// held: the held value must come back bit for bit, with sigma 0, and the
// free parameters must still reach the truth to 1e-4 (the held value is
// the true one, so the free optimum is the truth).
func TestLockHoldsValue(t *testing.T) {
	scene := sphereScene(36)
	cases := []struct {
		c    recoveryCase
		lock string
	}{
		{recoveryCase{brdf.Dielectric, [3]float64{0.6, 0.3, 0.15}, [3]float64{0.04, 0.04, 0.04}, 0.45}, ParamRoughness},
		{recoveryCase{brdf.Dielectric, [3]float64{0.08, 0.4, 0.7}, [3]float64{0.08, 0.08, 0.08}, 0.2}, ParamDiffuse},
		{recoveryCase{brdf.Metal, [3]float64{}, [3]float64{0.95, 0.64, 0.54}, 0.45}, ParamSpecular},
		{recoveryCase{brdf.Free, [3]float64{0.5, 0.45, 0.3}, [3]float64{0.3, 0.2, 0.1}, 0.45}, ParamSpecular},
	}
	for _, tc := range cases {
		t.Run(tc.c.String()+"/"+tc.lock, func(t *testing.T) {
			obs := scene.render(tc.c.kind, tc.c.diffuse, tc.c.f0, tc.c.rough, 0, nil)
			truth := truthParams(tc.c.kind, tc.c.diffuse, tc.c.f0, tc.c.rough)
			res, err := FitSegment(context.Background(), obs, tc.c.kind, Options{Threads: 2,
				Locks: map[string]Lock{"": {Names: []string{tc.lock}, Values: truth}}})
			if err != nil {
				t.Fatal(err)
			}
			idx, _ := lockIndices(tc.c.kind, tc.lock)
			var got, want, sig [brdf.MaxParams]float64
			res.Params.Vector(got[:0])
			truth.Vector(want[:0])
			res.Sigma.Vector(sig[:0])
			fixed := map[int]bool{}
			for _, k := range idx {
				fixed[k] = true
				if got[k] != want[k] || sig[k] != 0 {
					t.Errorf("held entry %d = %v ± %v, want exactly %v ± 0", k, got[k], sig[k], want[k])
				}
			}
			for k := 0; k < tc.c.kind.NumParams(); k++ {
				if !fixed[k] && math.Abs(got[k]-want[k]) > 1e-4 {
					t.Errorf("free entry %d = %.6f, truth %.6f", k, got[k], want[k])
				}
			}
			if len(res.Locked) != 1 || res.Locked[0] != tc.lock {
				t.Errorf("Locked = %v", res.Locked)
			}
			if len(res.LossHistory) != res.Passes {
				t.Errorf("%d losses for %d passes", len(res.LossHistory), res.Passes)
			}
			t.Logf("passes %d stop %q", res.Passes, res.Stop)
		})
	}
}

// TestLockAtWrongValue holds the roughness away from the truth: it stays
// exactly there, and the fit still ends by convergence with the free
// parameters compensating (not at the truth, so only finiteness is
// checked for them).
func TestLockAtWrongValue(t *testing.T) {
	obs := planeScene(30).render(brdf.Dielectric, [3]float64{0.6, 0.3, 0.15}, [3]float64{0.04, 0.04, 0.04}, 0.45, 0, nil)
	hold := brdf.Params{Roughness: 0.7}
	res, err := FitSegment(context.Background(), obs, brdf.Dielectric, Options{Threads: 1,
		Locks: map[string]Lock{"": {Names: []string{ParamRoughness}, Values: hold}}})
	if err != nil {
		t.Fatal(err)
	}
	if res.Params.Roughness != 0.7 || res.Sigma.Roughness != 0 || res.Stop == stopPasses {
		t.Fatalf("roughness %v ± %v, stop %q", res.Params.Roughness, res.Sigma.Roughness, res.Stop)
	}
	if res.StartRoughness != 0.7 {
		t.Errorf("start roughness %v: a held roughness leaves one start", res.StartRoughness)
	}
	for _, s := range res.Sigma.Diffuse {
		if !(s > 0) || math.IsInf(s, 0) {
			t.Errorf("free diffuse sigma %v", s)
		}
	}
}

// TestLockErrors: a parameter the model lacks, an unknown name, a value
// outside the fitted range and a segment the capture lacks are errors.
func TestLockErrors(t *testing.T) {
	obs := planeScene(8).render(brdf.Metal, [3]float64{}, [3]float64{0.9, 0.9, 0.9}, 0.5, 0, nil)
	for _, l := range []Lock{
		{Names: []string{ParamDiffuse}},
		{Names: []string{"gloss"}},
		{Names: []string{ParamRoughness, ParamRoughness}, Values: brdf.Params{Roughness: 0.5}},
		{Names: []string{ParamRoughness}, Values: brdf.Params{Roughness: 0.001}},
	} {
		_, err := FitSegment(context.Background(), obs, brdf.Metal, Options{Threads: 1, Locks: map[string]Lock{"": l}})
		var le *LockError
		if !errors.As(err, &le) {
			t.Errorf("lock %+v: error %v, want a *LockError", l.Names, err)
		}
	}
	set := &ObservationSet{Segments: []*SegmentObservations{{Name: "a", Kind: brdf.Metal, Obs: *obs}}}
	_, err := Fit(context.Background(), set, Options{Threads: 1, Locks: map[string]Lock{"b": {Names: []string{ParamRoughness}, Values: brdf.Params{Roughness: 0.5}}}})
	var le *LockError
	if !errors.As(err, &le) || le.Segment != "b" {
		t.Errorf("lock on an unknown segment: %v", err)
	}
}
