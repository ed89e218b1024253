package brdf

// Preset is a named material built from published optical constants, a
// starting point for a fit and a choice in the workbench.
//
// For a conductor N and K hold the complex index n + ik at the three
// wavelengths that stand for R, G and B, and Params.Specular is
// ConductorF0 of each. For a dielectric IOR is the refractive index and
// Params.Specular is F0FromIOR(IOR). Only F0 comes from the constants: the
// roughness (and a dielectric's diffuse colour) are neutral starting values,
// not measurements.
type Preset struct {
	Name   string
	Params Params
	// Source names the publication the constants come from.
	Source string
	// Wavelengths are the wavelengths in nm of the R, G, B constants
	// (conductors), or the one wavelength of IOR (dielectrics, in [0]).
	Wavelengths [3]float64
	N, K        RGB     // conductor complex index per channel; zero for dielectrics
	IOR         float64 // dielectric refractive index; zero for conductors
}

// Starting values for what optical constants do not fix.
const (
	presetRoughness = 0.3
	presetDiffuse   = 0.5
)

// conductor builds a metal preset from (n, k) per channel.
func conductor(name, source string, wl [3]float64, n, k RGB) Preset {
	p := Preset{Name: name, Source: source, Wavelengths: wl, N: n, K: k}
	p.Params = Params{Kind: Metal, Roughness: presetRoughness}
	for c := 0; c < 3; c++ {
		p.Params.Specular[c] = ConductorF0(n[c], k[c])
	}
	return p
}

// dielectric builds a dielectric preset from a refractive index.
func dielectric(name, source string, wl, ior float64) Preset {
	f0 := F0FromIOR(ior)
	return Preset{
		Name: name, Source: source, Wavelengths: [3]float64{wl}, IOR: ior,
		Params: Params{
			Kind:      Dielectric,
			Diffuse:   RGB{presetDiffuse, presetDiffuse, presetDiffuse},
			Specular:  RGB{f0, f0, f0},
			Roughness: presetRoughness,
		},
	}
}

const (
	srcJC    = "P. B. Johnson and R. W. Christy, Optical constants of the noble metals, Phys. Rev. B 6, 4370 (1972), via the refractiveindex.info database (CC0)"
	srcRakic = "A. D. Rakic, Algorithm for the determination of intrinsic optical constants of metal films: application to aluminum, Appl. Opt. 34, 4755 (1995), via the refractiveindex.info database (CC0)"
)

// The R, G, B wavelengths are the Johnson and Christy sample points
// closest to 650, 550 and 450 nm (photon energies 1.88, 2.26, 2.75 eV).
var jcWavelengths = [3]float64{659.5, 548.6, 450.9}

// presets is built once; Presets returns a copy.
var presets = []Preset{
	// Johnson and Christy 1972, table I, at 659.5, 548.6 and 450.9 nm.
	conductor("gold", srcJC, jcWavelengths, RGB{0.14, 0.43, 1.38}, RGB{3.697, 2.455, 1.914}),
	conductor("silver", srcJC, jcWavelengths, RGB{0.05, 0.06, 0.04}, RGB{4.483, 3.586, 2.657}),
	conductor("copper", srcJC, jcWavelengths, RGB{0.22, 1.02, 1.24}, RGB{3.747, 2.577, 2.397}),
	// Rakic 1995 tabulated data at 652.3, 563.6 and 442.8 nm (the grid
	// points closest to 650, 550 and 450 nm).
	conductor("aluminium", srcRakic, [3]float64{652.25, 563.57, 442.80},
		RGB{1.5724, 1.0728, 0.60790}, RGB{7.7354, 6.7839, 5.3676}),
	// Refractive indices at the helium d line (587.6 nm) unless noted.
	dielectric("glass-n-bk7", "SCHOTT N-BK7 datasheet, nd = 1.5168 (Sellmeier fit)", 587.6, 1.5168),
	dielectric("fused-silica", "I. H. Malitson 1965, fused silica: n = 1.45846 at 587.6 nm", 587.6, 1.45846),
	dielectric("water", "M. Daimon and A. Masumura 2007, distilled water: n = 1.3334 at 587.6 nm, 20 C", 587.6, 1.3334),
	dielectric("diamond", "Handbook of Optics: diamond n = 2.4175", 587.6, 2.4175),
	dielectric("plastic", "glTF 2.0 specification, Appendix B: the default dielectric, ior 1.5 (F0 = 0.04)", 0, 1.5),
}

// Presets returns the preset materials: conductors gold, silver, copper and
// aluminium, and dielectrics glass-n-bk7, fused-silica, water, diamond and
// plastic. The slice is a copy the caller may modify.
func Presets() []Preset { return append([]Preset(nil), presets...) }

// PresetByName returns the preset with the given name.
func PresetByName(name string) (Preset, bool) {
	for _, p := range presets {
		if p.Name == name {
			return p, true
		}
	}
	return Preset{}, false
}
