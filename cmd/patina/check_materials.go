package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"

	"patina/assets/capture"
	"patina/assets/materials"
	"patina/assets/mesh"
)

func init() { jsonKinds["patina_materials"] = checkMaterials }

// checkMaterials checks a materials file on its own and, when the capture it
// names can be found, against that capture and its mesh.
func checkMaterials(_ context.Context, path string, _ checkOptions) *checkResult {
	r := &checkResult{File: path, Kind: "materials"}
	f, err := materials.Load(path)
	if err != nil {
		addMaterialsErrors(r, err)
		return r
	}
	if f.Capture != "" {
		cp := f.Capture
		if !filepath.IsAbs(cp) {
			cp = filepath.Join(filepath.Dir(path), filepath.FromSlash(cp))
		}
		if _, err := os.Stat(cp); err != nil {
			r.warnf("capture", "the capture %q is not there, so the segments were not checked against it", f.Capture)
		} else if c, err := capture.Load(cp); err != nil {
			r.warnf("capture", "the capture %q does not load (%v), so the segments were not checked against it", f.Capture, err)
		} else {
			m, _, merr := mesh.Load(c.Resolve(c.Mesh))
			if merr != nil {
				m = nil
			}
			if err := f.Validate(c, m); err != nil {
				addMaterialsErrors(r, err)
			}
		}
	}
	segs := f.Segments
	r.text = func(w io.Writer) {
		fmt.Fprintf(w, "materials %s: format %d, capture %q, %d segments\n", path, f.Version, f.Capture, len(segs))
		for _, s := range segs {
			fmt.Fprintf(w, "  %-14q %-10s diffuse (%.3g, %.3g, %.3g) specular (%.3g, %.3g, %.3g) roughness %.3g\n",
				s.Name, s.Model, s.Diffuse[0], s.Diffuse[1], s.Diffuse[2], s.Specular[0], s.Specular[1], s.Specular[2], s.Roughness)
		}
	}
	r.Summary = f
	return r
}

// addMaterialsErrors records every problem in err: Validate returns one
// *materials.Error per problem joined by errors.Join, Load and Parse a
// single one; each is listed with its JSON path. Anything else (an I/O
// error) is listed for the whole file.
func addMaterialsErrors(r *checkResult, err error) {
	list := []error{err}
	if j, ok := err.(interface{ Unwrap() []error }); ok {
		list = j.Unwrap()
	}
	for _, e := range list {
		var me *materials.Error
		if errors.As(e, &me) {
			r.errorf(me.Path, "%s", me.Msg)
		} else {
			r.errorf("", "%v", e)
		}
	}
}
