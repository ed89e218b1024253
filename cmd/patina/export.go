package main

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"patina/assets/atomicfile"
	"patina/assets/capture"
	"patina/assets/gltf"
	"patina/assets/materials"
	"patina/assets/mesh"
)

func init() {
	register(&command{
		name:    "export",
		summary: "write the fitted object as binary glTF 2.0 (.glb) and a CSV table",
		usage: `patina export CAPTURE.json -materials M.json [-o model.glb] [-up AXIS]

Writes one mesh with one primitive and one material per segment, converted
from the capture's up axis to glTF's +Y up (metres, right-handed), and beside
it the materials as a CSV table (model.csv). Metal segments map exactly to
glTF's metallic-roughness model; dielectric and free segments carry their F0
through KHR_materials_ior and KHR_materials_specular, and the summary states
how far glTF's diffuse term departs from Patina's.

  -materials M.json  the materials file (required)
  -o FILE            output .glb (default: the capture's name, .glb)
  -up AXIS           the source's up axis (default: the capture's "up")`,
		run: runExport,
	})
}

func runExport(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("export", flag.ContinueOnError)
	fs.SetOutput(stderr)
	matPath := fs.String("materials", "", "materials file")
	out := fs.String("o", "", "output .glb")
	up := fs.String("up", "", "source up axis")
	pos, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return badInputf("export: want one CAPTURE.json, got %d arguments", len(pos))
	}
	if *matPath == "" {
		return badInputf("export: -materials M.json is required")
	}
	c, err := capture.Load(pos[0])
	if err != nil {
		return badInput(err)
	}
	if ps := c.Validate(); capture.Errors(ps) > 0 {
		return badInput(&capture.Error{File: pos[0], Problems: ps})
	}
	m, _, err := mesh.Load(c.Resolve(c.Mesh))
	if err != nil {
		return badInput(err)
	}
	mf, err := materials.Load(*matPath)
	if err != nil {
		return badInput(err)
	}
	if err := mf.Validate(c, m); err != nil {
		return badInput(err)
	}
	triSeg, err := c.TriangleSegments(m)
	if err != nil {
		return badInput(fmt.Errorf("%s: %w", pos[0], err))
	}
	segs := c.EffectiveSegments(m)
	var mats []gltf.Material
	var rows []materials.Segment
	type note struct{ name, text string }
	var notes []note
	for _, s := range segs {
		ms := mf.Segment(s.Name)
		if ms == nil {
			return badInputf("%s: no material for segment %q", *matPath, s.Name)
		}
		p, err := ms.Params()
		if err != nil {
			return badInputf("%s: segment %q: %v", *matPath, s.Name, err)
		}
		gm := gltf.Map(s.Name, p)
		if ms.Sigma != nil {
			gm.Extras = map[string]any{"patina_model": ms.Model, "patina_sigma": ms.Sigma}
		} else {
			gm.Extras = map[string]any{"patina_model": ms.Model}
		}
		mats = append(mats, gm)
		rows = append(rows, *ms)
		notes = append(notes, note{s.Name, gltf.Describe(p)})
	}
	if *up == "" {
		*up = c.Up
	}
	if _, err := gltf.UpRotation(*up); err != nil {
		return badInputf("export: -up: %v", err)
	}
	if *out == "" {
		*out = safeName(c.Name) + ".glb"
	}
	hashes := map[string]string{}
	for _, p := range []string{c.Path, c.Resolve(c.Mesh), mf.Path} {
		h, err := fileSHA256(p)
		if err != nil {
			return err
		}
		hashes[filepath.Base(p)] = h
	}
	opt := gltf.Options{
		Up:        *up,
		NodeName:  c.Name,
		Generator: "Patina " + Version,
		Extras: map[string]any{
			"patina_capture": c.Name,
			"patina_sha256":  hashes,
			"patina_note":    "materials fitted by Patina; see each material's extras for one-standard-deviation uncertainties",
		},
	}
	var sum *gltf.Summary
	if err := atomicfile.Write(*out, 0o644, func(w io.Writer) error {
		var err error
		sum, err = gltf.WriteGLB(w, m, triSeg, mats, opt)
		return err
	}); err != nil {
		return err
	}
	csvPath := strings.TrimSuffix(*out, filepath.Ext(*out)) + ".csv"
	if err := atomicfile.Write(csvPath, 0o644, func(w io.Writer) error { return gltf.WriteCSV(w, rows) }); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "Wrote %s: %d primitives, %d triangles, %d vertices, %s\n", *out, sum.Primitives, sum.Triangles, sum.Vertices, humanBytes(int64(sum.Bytes)))
	fmt.Fprintf(stdout, "  bounds (+Y up) (%.4g, %.4g, %.4g) to (%.4g, %.4g, %.4g) m\n", sum.Min[0], sum.Min[1], sum.Min[2], sum.Max[0], sum.Max[1], sum.Max[2])
	fmt.Fprintf(stdout, "Wrote %s\nHow exactly glTF's metallic-roughness model carries each material:\n", csvPath)
	for _, n := range notes {
		fmt.Fprintf(stdout, "  %-14s %s\n", n.name, n.text)
	}
	return nil
}

// parseInterleaved parses flags that may come before or after positional
// arguments and returns the positional ones.
func parseInterleaved(fs *flag.FlagSet, args []string) ([]string, error) {
	var pos []string
	for {
		if err := fs.Parse(args); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				return nil, errHelpShown
			}
			return nil, badInput(err)
		}
		args = fs.Args()
		if len(args) == 0 {
			return pos, nil
		}
		pos = append(pos, args[0])
		args = args[1:]
	}
}

func fileSHA256(path string) (string, error) {
	f, err := os.Open(path)
	if err != nil {
		return "", err
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		return "", fmt.Errorf("%s: %w", path, err)
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}

func safeName(s string) string {
	var b strings.Builder
	for _, r := range s {
		switch {
		case r >= 'a' && r <= 'z', r >= 'A' && r <= 'Z', r >= '0' && r <= '9', r == '-', r == '_':
			b.WriteRune(r)
		case r == ' ':
			b.WriteRune('-')
		}
	}
	if b.Len() == 0 {
		return "model"
	}
	return b.String()
}
