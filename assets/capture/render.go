package capture

import (
	"fmt"

	"patina/brdf"
	"patina/render"
)

// Pinhole returns the renderer's camera for this calibrated camera: the
// same resolution, intrinsics, lens distortion and pose, so a render lines
// up with the camera's photos pixel for pixel.
func (c *Camera) Pinhole() render.Pinhole {
	return render.Pinhole{
		Width: c.Width, Height: c.Height, Fx: c.Fx, Fy: c.Fy, Cx: c.Cx, Cy: c.Cy,
		Dist:     c.Distortion,
		Position: render.V3(c.Position[0], c.Position[1], c.Position[2]),
		Rotation: c.Rotation,
	}
}

// RenderLight returns the renderer's light for this capture light, checked
// for usable numbers.
func (l *Light) RenderLight() (render.Light, error) {
	v := func(a [3]float64) render.Vec3 { return render.V3(a[0], a[1], a[2]) }
	var r render.Light
	switch l.Type {
	case LightPoint:
		r = render.Light{Kind: render.PointLight, Position: v(l.Position), Intensity: brdf.RGB(l.Intensity)}
	case LightSphere:
		r = render.Light{Kind: render.SphereLight, Position: v(l.Position), Intensity: brdf.RGB(l.Intensity), Radius: l.Radius}
	case LightDirectional:
		r = render.Light{Kind: render.DirectionalLight, Direction: v(l.Direction), Irradiance: brdf.RGB(l.Irradiance)}
	default:
		return r, fmt.Errorf("light %q has unknown type %q", l.ID, l.Type)
	}
	return r, r.Validate()
}
