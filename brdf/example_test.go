package brdf_test

import (
	"fmt"
	"math"

	"patina/brdf"
)

// Evaluate a glossy gold preset for light arriving 30 degrees from the
// normal and a viewer in the mirror direction. Eval leaves out the cosine
// factor, so reflected radiance under a directional light of irradiance E
// (measured perpendicular to the light) is Eval * cos(theta_i) * E.
func ExampleEval() {
	gold, _ := brdf.PresetByName("gold")
	p := gold.Params
	p.Roughness = 0.4

	th := 30 * math.Pi / 180
	wi := brdf.Vec{X: math.Sin(th), Y: 0, Z: math.Cos(th)}  // towards the light
	wo := brdf.Vec{X: -math.Sin(th), Y: 0, Z: math.Cos(th)} // towards the viewer

	f := brdf.Eval(&p, wo, wi)
	fmt.Printf("f = %.4f %.4f %.4f per sr\n", f[0], f[1], f[2])
	fmt.Printf("radiance under E = 1: %.4f\n", f[1]*wi.Z)
	// Output:
	// f = 3.9727 3.2477 1.6849 per sr
	// radiance under E = 1: 2.8126
}
