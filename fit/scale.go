package fit

import (
	"fmt"
	"math"

	"patina/brdf"
)

// Scale is the radiometric scale the fit solved, or why it did not.
type Scale struct {
	// Value multiplies the capture's light values to give the photos'
	// radiance: photo radiance = Value * (radiance the lights predict).
	Value float64
	// Solved is true when Value came from calibration targets; otherwise
	// Value is 1 and the fitted colours are relative to the capture's light
	// units.
	Solved bool
	// Targets names the segments with a reference albedo used, and
	// Observations counts their observations that entered the solve.
	Targets      []string
	Observations int
	// Sigma is the standard error of Value from the least-squares residual.
	Sigma float64
	// Note says in words what happened.
	Note string
}

// solveScale finds the scale s between the capture's light units and the
// photos' radiance from the segments that carry a reference albedo:
// the linear least-squares solution of o = s * a over every channel of
// their observations away from the specular configuration, where
// a = sum over lights of the diffuse lobe of the target's known albedo times
// the irradiance (brdf.EvalLobes with F0 = 0.04, the glTF 2.0 default for a
// dielectric, so the diffuse lobe's own Fresnel weighting is included):
//
//	s = sum(o a) / sum(a a).
func solveScale(set *ObservationSet) Scale {
	sc := Scale{Value: 1}
	var num, den, nn float64
	n := 0
	cosFar := math.Cos(20 * math.Pi / 180)
	for _, so := range set.Segments {
		if so.ReferenceAlbedo == nil {
			continue
		}
		sc.Targets = append(sc.Targets, so.Name)
		ra := *so.ReferenceAlbedo
		p := brdf.Params{Kind: brdf.Dielectric, Diffuse: brdf.RGB(ra), Specular: brdf.RGB{0.04, 0.04, 0.04}, Roughness: 0.5}
		ob := &so.Obs
		for i := 0; i < ob.Len(); i++ {
			if ob.halfCos(i) > cosFar {
				continue
			}
			wo := brdf.Vec{X: float64(ob.WoX[i]), Y: float64(ob.WoY[i]), Z: float64(ob.WoZ[i])}
			s, e := ob.lights(i)
			var a [3]float64
			for l := s; l < e; l++ {
				wi := brdf.Vec{X: float64(ob.WiX[l]), Y: float64(ob.WiY[l]), Z: float64(ob.WiZ[l])}
				d, _ := brdf.EvalLobes(&p, wo, wi)
				a[0] += d[0] * float64(ob.ER[l])
				a[1] += d[1] * float64(ob.EG[l])
				a[2] += d[2] * float64(ob.EB[l])
			}
			o := [3]float64{float64(ob.R[i]), float64(ob.G[i]), float64(ob.B[i])}
			if ob.censored(i) != 0 {
				continue // a clipped pixel gives only lower bounds
			}
			for c := 0; c < 3; c++ {
				num += o[c] * a[c]
				den += a[c] * a[c]
				nn += o[c] * o[c]
			}
			n++
		}
	}
	switch {
	case len(sc.Targets) == 0:
		sc.Note = "no segment has a reference_albedo: colours are relative to the capture's light units"
		return sc
	case n < 10 || den <= 0:
		sc.Note = fmt.Sprintf("calibration target %s has only %d usable observations: scale not solved, colours are relative", joinList(sc.Targets), n)
		return sc
	}
	sc.Value = num / den
	sc.Solved = true
	sc.Observations = n
	// Residual sum of squares nn - s num; standard error sqrt(rss/(m-1)/den).
	if m := 3 * n; m > 1 {
		rss := math.Max(nn-sc.Value*num, 0)
		sc.Sigma = math.Sqrt(rss / float64(m-1) / den)
	}
	sc.Note = fmt.Sprintf("solved from %s (%d observations): photo radiance = %.5g x capture light units", joinList(sc.Targets), n, sc.Value)
	return sc
}
