package demo

import (
	"patina/assets/capture"
	"patina/assets/mesh"
	"patina/render"
)

func loadMesh(c *capture.Capture) (*render.Mesh, error) {
	m, _, err := mesh.Load(c.Resolve(c.Mesh))
	return m, err
}
