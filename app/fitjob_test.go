package app

import (
	"path/filepath"
	"testing"

	"patina/assets/materials"
	"patina/brdf"
	"patina/fit"
)

// TestFitHoldsLockedParameter checks that a held parameter is fixed in the
// fit itself, not only restored afterwards: the fit's own result carries
// the held value exactly, with sigma 0 and the parameter named as locked,
// while the other parameters are estimated (their sigma is positive).
func TestFitHoldsLockedParameter(t *testing.T) {
	s := openFixture(t)
	p := s.Materials[0].Params
	p.Roughness = 0.61
	if err := s.SetParams(0, p); err != nil {
		t.Fatal(err)
	}
	s.SetLock(0, LockRoughness, true)
	j, err := s.StartFit()
	if err != nil {
		t.Fatal(err)
	}
	if err := j.Wait(); err != nil {
		t.Fatalf("fit: %v", err)
	}
	sf := s.FitResult.Segments[0]
	if sf.Name != s.Materials[0].Name || sf.Params.Roughness != 0.61 || sf.Sigma.Roughness != 0 {
		t.Fatalf("fit result %s: roughness %v ± %v, want 0.61 ± 0", sf.Name, sf.Params.Roughness, sf.Sigma.Roughness)
	}
	if len(sf.Locked) != 1 || sf.Locked[0] != fit.ParamRoughness {
		t.Errorf("Locked = %v", sf.Locked)
	}
	if sf.Kind != brdf.Metal && !(sf.Sigma.Diffuse[0] > 0) {
		t.Errorf("free diffuse sigma %v", sf.Sigma.Diffuse[0])
	}
	if len(sf.LossHistory) != sf.Passes {
		t.Errorf("%d losses for %d passes", len(sf.LossHistory), sf.Passes)
	}
	// The hold and the loss history survive a save and a reopen: the file
	// names the held parameter and carries one loss per pass, and a new
	// session reading it holds the same parameter again.
	out := filepath.Join(t.TempDir(), "m.json")
	if err := s.SaveMaterials(out); err != nil {
		t.Fatal(err)
	}
	mf, err := materials.Load(out)
	if err != nil {
		t.Fatal(err)
	}
	ms := mf.Segment(sf.Name)
	if ms == nil || len(ms.Locked) != 1 || ms.Locked[0] != "roughness" || len(ms.LossHistory) != sf.Passes {
		t.Fatalf("saved segment %+v", ms)
	}
	s2 := openFixture(t)
	if err := s2.LoadMaterials(out); err != nil {
		t.Fatal(err)
	}
	if s2.Materials[0].Locked != LockRoughness || s2.Materials[0].Params.Roughness != 0.61 {
		t.Errorf("reopened: lock %v, roughness %v", s2.Materials[0].Locked, s2.Materials[0].Params.Roughness)
	}
}

// TestFitLocksSkipMetalDiffuse: the table's holds become the fit's locks
// at the table's values, and a diffuse hold on a metal (which has no
// diffuse colour) is left out rather than failing the fit.
func TestFitLocksSkipMetalDiffuse(t *testing.T) {
	s := &Session{Materials: []SegmentMaterial{
		{Name: "a", Params: brdf.Params{Kind: brdf.Dielectric, Diffuse: brdf.RGB{0.2, 0.3, 0.4}, Roughness: 0.3}, Locked: LockDiffuse | LockRoughness},
		{Name: "b", Params: brdf.Params{Kind: brdf.Metal, Specular: brdf.RGB{0.9, 0.8, 0.7}}, Locked: LockDiffuse},
		{Name: "c", Params: brdf.Params{Kind: brdf.Metal}, Locked: LockDiffuse | LockSpecular},
	}}
	l := s.fitLocks()
	if len(l) != 2 {
		t.Fatalf("locks %+v", l)
	}
	if a := l["a"]; len(a.Names) != 2 || a.Names[0] != fit.ParamDiffuse || a.Names[1] != fit.ParamRoughness || a.Values.Roughness != 0.3 {
		t.Errorf("a: %+v", a)
	}
	if _, ok := l["b"]; ok {
		t.Errorf("metal diffuse hold became a lock")
	}
	if c := l["c"]; len(c.Names) != 1 || c.Names[0] != fit.ParamSpecular {
		t.Errorf("c: %+v", c)
	}
}
