package main

import (
	"encoding/binary"
	"errors"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// FuzzReadRays feeds arbitrary bytes to the ray-file reader of `patina
// trace`. No input may panic; every refusal of a readable file is a
// *RayFileError; an accepted file has one ray per 28-byte record, each
// with a finite origin, a unit direction (to 1e-3) and tmax >= 0.
func FuzzReadRays(f *testing.F) {
	rec := func(v ...float32) []byte {
		var b []byte
		for _, x := range v {
			b = binary.LittleEndian.AppendUint32(b, math.Float32bits(x))
		}
		return b
	}
	f.Add(rec(0, 0, 1, 0, 0, -1, float32(math.Inf(1))))
	f.Add(append(rec(0, 0, 1, 0, 0, -1, 2), rec(1, 2, 3, 0.6, 0.8, 0, 0)...))
	f.Add(rec(float32(math.NaN()), 0, 1, 0, 0, -1, 1))
	f.Add(rec(0, 0, 1, 0, 0, -2, 1))
	f.Add(rec(0, 0, 1, 0, 0, -1, -1)[:27])
	f.Add([]byte{})
	f.Fuzz(func(t *testing.T, data []byte) {
		p := filepath.Join(t.TempDir(), "rays.bin")
		if err := os.WriteFile(p, data, 0o644); err != nil {
			t.Fatal(err)
		}
		rays, tmax, err := readRays(p)
		if err != nil {
			var re *RayFileError
			if !errors.As(err, &re) {
				t.Fatalf("untyped error %T: %v", err, err)
			}
			return
		}
		if len(rays) != len(data)/rayRecordBytes || len(tmax) != len(rays) || len(data)%rayRecordBytes != 0 {
			t.Fatalf("%d bytes gave %d rays", len(data), len(rays))
		}
		for i, r := range rays {
			if l := r.D.Len(); math.Abs(l-1) > 1e-3 || math.IsNaN(r.O.X+r.O.Y+r.O.Z) || math.IsInf(r.O.X+r.O.Y+r.O.Z, 0) {
				t.Fatalf("ray %d accepted with origin %v direction %v", i, r.O, r.D)
			}
			if !(tmax[i] >= 0) {
				t.Fatalf("ray %d accepted with tmax %v", i, tmax[i])
			}
		}
	})
}

// FuzzParseLight feeds arbitrary strings to the -light parser of `patina
// render`: no panic, and every accepted light passes the renderer's own
// check (render.Light.Validate).
func FuzzParseLight(f *testing.F) {
	for _, s := range []string{
		"point:0,0,1:1,1,1", "sphere:0.3,-0.4,0.5:0.8,0.8,0.8:0.05", "directional:0,0,1:2,2,2",
		"point:NaN,0,0:1,1,1", "sphere:0,0,1:1,1,1:-1", "directional:0,0,0:1,1,1", "spot:0,0,1:1,1,1",
		"point", "point:1,2:1,1,1", "point:0,0,1:1e308,1,1", "sphere:0,0,1:1,1,1:1e999",
	} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		l, err := parseLight(s)
		if err != nil {
			return
		}
		if err := l.Validate(); err != nil {
			t.Fatalf("%q accepted, but the light fails its check: %v", s, err)
		}
	})
}
