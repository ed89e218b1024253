package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

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

// addMaterialsErrors records every *materials.Error joined in err with its
// JSON path.
func addMaterialsErrors(r *checkResult, err error) {
	var list []error
	if j, ok := err.(interface{ Unwrap() []error }); ok {
		list = j.Unwrap()
	} else {
		list = []error{err}
	}
	for _, e := range list {
		var me *materials.Error
		if errors.As(e, &me) {
			r.errorf(me.Path, "%s", me.Msg)
			continue
		}
		// Validate joins its problems as lines "materials: FILE: PATH: msg".
		for _, line := range strings.Split(e.Error(), "\n") {
			line = strings.TrimPrefix(strings.TrimSpace(line), "materials: ")
			line = strings.TrimPrefix(line, r.File+": ")
			path, msg := "", line
			if i := strings.Index(line, ": "); i > 0 && !strings.Contains(line[:i], " ") {
				path, msg = line[:i], line[i+2:]
			}
			r.errorf(path, "%s", msg)
		}
	}
}
