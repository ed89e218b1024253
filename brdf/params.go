package brdf

import (
	"fmt"
	"math"
)

// RGB is a linear colour with sRGB / Rec. 709 primaries, or a per-channel
// quantity such as a reflectance.
type RGB [3]float64

// Kind says which entries of Params are free. It matches the model kinds of
// the capture format: "dielectric", "metal" and "free".
type Kind uint8

const (
	// Dielectric has a free diffuse colour and one scalar F0 shared by
	// the three channels (Specular[0] is used; FromVector fills all three).
	Dielectric Kind = iota
	// Metal has a free F0 colour and no diffuse term (Diffuse is ignored
	// by the model and zeroed by FromVector).
	Metal
	// Free has every channel of diffuse and F0 free.
	Free
)

// MaxParams is the longest parameter vector of any kind (Free).
const MaxParams = 7

// MinRoughness is the smallest perceptual roughness the model evaluates;
// smaller values are raised to it (alpha >= 1e-4), because a perfect mirror
// has no density to evaluate or sample. Gradients with respect to roughness
// are zero below it.
const MinRoughness = 0.01

var kindNames = [...]string{Dielectric: "dielectric", Metal: "metal", Free: "free"}

var paramNames = [...][]string{
	Dielectric: {"diffuse.r", "diffuse.g", "diffuse.b", "f0", "roughness"},
	Metal:      {"specular.r", "specular.g", "specular.b", "roughness"},
	Free:       {"diffuse.r", "diffuse.g", "diffuse.b", "specular.r", "specular.g", "specular.b", "roughness"},
}

// ParseKind returns the kind named s: "dielectric", "metal" or "free".
func ParseKind(s string) (Kind, error) {
	for k, n := range kindNames {
		if s == n {
			return Kind(k), nil
		}
	}
	return 0, &KindError{Name: s}
}

// KindError reports a material kind name that ParseKind does not know.
type KindError struct{ Name string }

func (e *KindError) Error() string {
	return fmt.Sprintf("brdf: unknown material kind %q (want \"dielectric\", \"metal\" or \"free\")", e.Name)
}

// String returns the capture-format name of k, or "Kind(n)" for an
// undefined kind.
func (k Kind) String() string {
	if int(k) < len(kindNames) {
		return kindNames[k]
	}
	return fmt.Sprintf("Kind(%d)", uint8(k))
}

// Valid reports whether k is one of the defined kinds.
func (k Kind) Valid() bool { return int(k) < len(kindNames) }

// NumParams returns the length of the parameter vector of kind k:
// dielectric 5, metal 4, free 7, and 0 for an undefined kind.
func (k Kind) NumParams() int {
	if !k.Valid() {
		return 0
	}
	return len(paramNames[k])
}

// ParamNames returns the names of the parameter vector entries of kind k, in
// vector order (for reports and error messages). It returns a new slice.
func (k Kind) ParamNames() []string {
	if !k.Valid() {
		return nil
	}
	return append([]string(nil), paramNames[k]...)
}

// Params are the parameters of the reflectance model.
//
// Diffuse is the Lambertian albedo (linear RGB, 0..1). Specular is F0, the
// reflectance at normal incidence (linear RGB, 0..1). Roughness is the
// perceptual roughness r (0..1); the GGX width is alpha = r*r, the glTF 2.0
// convention. Kind says which entries are free: a Dielectric uses
// Specular[0] for all three channels, a Metal has no diffuse term.
type Params struct {
	Kind      Kind
	Diffuse   RGB
	Specular  RGB
	Roughness float64
}

// Alpha returns the GGX width alpha = max(r, MinRoughness)^2.
func (p *Params) Alpha() float64 {
	r := p.Roughness
	if !(r > MinRoughness) { // also NaN
		r = MinRoughness
	}
	return r * r
}

// alpha2 returns Alpha() squared.
func (p *Params) alpha2() float64 {
	a := p.Alpha()
	return a * a
}

// coeffs returns effective() as scalars, for the hot paths.
func (p *Params) coeffs() (d0, d1, d2, s0, s1, s2 float64) {
	switch p.Kind {
	case Dielectric:
		s := p.Specular[0]
		return p.Diffuse[0], p.Diffuse[1], p.Diffuse[2], s, s, s
	case Metal:
		return 0, 0, 0, p.Specular[0], p.Specular[1], p.Specular[2]
	}
	return p.Diffuse[0], p.Diffuse[1], p.Diffuse[2], p.Specular[0], p.Specular[1], p.Specular[2]
}

// effective returns the diffuse albedo and F0 the model uses, with the
// constraints of the kind applied, so that Eval(p) equals
// Eval(FromVector(Vector(p))) even for a Params filled in by hand.
func (p *Params) effective() (d, f0 RGB) {
	switch p.Kind {
	case Dielectric:
		s := p.Specular[0]
		return p.Diffuse, RGB{s, s, s}
	case Metal:
		return RGB{}, p.Specular
	}
	return p.Diffuse, p.Specular
}

// Vector appends the parameter vector of p to dst[:0] and returns it. The
// order is, by kind:
//
//	dielectric [dr dg db f0 r]         (5 entries)
//	metal      [sr sg sb r]            (4 entries)
//	free       [dr dg db sr sg sb r]   (7 entries)
//
// where d is Diffuse, s is Specular (F0), f0 is Specular[0] and r is the
// perceptual Roughness. Grad uses the same order. An undefined kind gives an
// empty vector.
func (p *Params) Vector(dst []float64) []float64 {
	dst = dst[:0]
	d, s := p.Diffuse, p.Specular
	switch p.Kind {
	case Dielectric:
		dst = append(dst, d[0], d[1], d[2], s[0], p.Roughness)
	case Metal:
		dst = append(dst, s[0], s[1], s[2], p.Roughness)
	case Free:
		dst = append(dst, d[0], d[1], d[2], s[0], s[1], s[2], p.Roughness)
	}
	return dst
}

// FromVector sets the parameters of p's Kind from v, in the order Vector
// documents. The kind's constraints are applied: a Dielectric gets its F0 in
// all three Specular channels, a Metal gets a zero Diffuse. It returns a
// *VectorError, leaving p unchanged, when v has the wrong length or an entry
// is not finite or outside [0, 1] (use ClampVector first to project an
// optimiser's step back into range).
func (p *Params) FromVector(v []float64) error {
	n := p.Kind.NumParams()
	if n == 0 {
		return &VectorError{Kind: p.Kind, Index: -1, Len: len(v), Msg: "undefined material kind"}
	}
	if len(v) != n {
		return &VectorError{Kind: p.Kind, Index: -1, Len: len(v),
			Msg: fmt.Sprintf("parameter vector has %d entries, want %d", len(v), n)}
	}
	for i, x := range v {
		if math.IsNaN(x) || math.IsInf(x, 0) || x < 0 || x > 1 {
			return &VectorError{Kind: p.Kind, Index: i, Len: len(v), Value: x,
				Msg: fmt.Sprintf("%s = %g, want a number in [0, 1]", paramNames[p.Kind][i], x)}
		}
	}
	switch p.Kind {
	case Dielectric:
		p.Diffuse = RGB{v[0], v[1], v[2]}
		p.Specular = RGB{v[3], v[3], v[3]}
		p.Roughness = v[4]
	case Metal:
		p.Diffuse = RGB{}
		p.Specular = RGB{v[0], v[1], v[2]}
		p.Roughness = v[3]
	case Free:
		p.Diffuse = RGB{v[0], v[1], v[2]}
		p.Specular = RGB{v[3], v[4], v[5]}
		p.Roughness = v[6]
	}
	return nil
}

// ClampVector clamps every entry of v to [0, 1] in place, turning NaN into
// 0, so that FromVector accepts it. It is the projection an optimiser
// applies after a step.
func ClampVector(v []float64) {
	for i, x := range v {
		switch {
		case !(x > 0): // also NaN
			v[i] = 0
		case x > 1:
			v[i] = 1
		}
	}
}

// VectorError reports a parameter vector that FromVector cannot accept.
// Index is the offending entry, or -1 when the vector as a whole is wrong.
type VectorError struct {
	Kind  Kind
	Index int
	Len   int
	Value float64
	Msg   string
}

func (e *VectorError) Error() string {
	if e.Index >= 0 {
		return fmt.Sprintf("brdf: %s parameter vector entry %d: %s", e.Kind, e.Index, e.Msg)
	}
	return fmt.Sprintf("brdf: %s parameter vector: %s", e.Kind, e.Msg)
}

// Validate reports whether p is inside the documented ranges and obeys its
// kind's constraints. The model evaluates any Params without failing; this is
// for values read from files or typed by a user.
func (p *Params) Validate() error {
	if !p.Kind.Valid() {
		return &ParamError{Field: "kind", Msg: fmt.Sprintf("undefined material kind %d", uint8(p.Kind))}
	}
	check := func(field string, x float64) error {
		if math.IsNaN(x) || math.IsInf(x, 0) || x < 0 || x > 1 {
			return &ParamError{Field: field, Msg: fmt.Sprintf("%g, want a number in [0, 1]", x)}
		}
		return nil
	}
	ch := [3]string{"r", "g", "b"}
	for c := 0; c < 3; c++ {
		if err := check("diffuse."+ch[c], p.Diffuse[c]); err != nil {
			return err
		}
		if err := check("specular."+ch[c], p.Specular[c]); err != nil {
			return err
		}
	}
	if err := check("roughness", p.Roughness); err != nil {
		return err
	}
	switch p.Kind {
	case Dielectric:
		if p.Specular[1] != p.Specular[0] || p.Specular[2] != p.Specular[0] {
			return &ParamError{Field: "specular", Msg: "a dielectric has one F0 for all channels"}
		}
	case Metal:
		if p.Diffuse != (RGB{}) {
			return &ParamError{Field: "diffuse", Msg: "a metal has no diffuse colour"}
		}
	}
	return nil
}

// ParamError reports a Params field outside its range or its kind's
// constraints.
type ParamError struct {
	Field string
	Msg   string
}

func (e *ParamError) Error() string { return "brdf: parameter " + e.Field + ": " + e.Msg }
