package main

import (
	"context"
	"encoding/binary"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"sync"
	"time"

	"patina/assets/mesh"
	"patina/render"
)

// rayRecordBytes is the size of one ray file record: seven little-endian
// float32 (origin x y z, unit direction x y z, tmax).
const rayRecordBytes = 28

// maxRayRecords bounds a ray file (checked from its size before reading).
const maxRayRecords = 1 << 26

// RayFileError reports a malformed ray file, naming the file and the record.
type RayFileError struct {
	File   string
	Record int   // zero-based record index, -1 for the file as a whole
	Offset int64 // byte offset of the record
	Msg    string
}

func (e *RayFileError) Error() string {
	if e.Record < 0 {
		return fmt.Sprintf("%s: %s", e.File, e.Msg)
	}
	return fmt.Sprintf("%s: record %d (byte %d): %s", e.File, e.Record, e.Offset, e.Msg)
}

// readRays reads and checks a ray file.
func readRays(path string) ([]render.Ray, []float64, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, nil, err
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return nil, nil, err
	}
	size := st.Size()
	if size%rayRecordBytes != 0 {
		return nil, nil, &RayFileError{File: path, Record: int(size / rayRecordBytes), Offset: size - size%rayRecordBytes,
			Msg: fmt.Sprintf("truncated: the file has %d bytes, not a multiple of the %d-byte record", size, rayRecordBytes)}
	}
	n := size / rayRecordBytes
	if n > maxRayRecords {
		return nil, nil, &RayFileError{File: path, Record: -1, Msg: fmt.Sprintf("%d records exceed the limit of %d", n, maxRayRecords)}
	}
	buf := make([]byte, size)
	if _, err := io.ReadFull(f, buf); err != nil {
		return nil, nil, fmt.Errorf("%s: %w", path, err)
	}
	rays := make([]render.Ray, n)
	tmax := make([]float64, n)
	for i := range rays {
		rec := buf[i*rayRecordBytes : (i+1)*rayRecordBytes]
		var v [7]float64
		for k := range v {
			v[k] = float64(math.Float32frombits(binary.LittleEndian.Uint32(rec[4*k:])))
		}
		bad := func(msg string) error {
			return &RayFileError{File: path, Record: i, Offset: int64(i) * rayRecordBytes, Msg: msg}
		}
		for k := 0; k < 6; k++ {
			if math.IsNaN(v[k]) || math.IsInf(v[k], 0) {
				return nil, nil, bad(fmt.Sprintf("value %d of 7 is %v; origin and direction must be finite", k+1, v[k]))
			}
		}
		d := render.Vec3{X: v[3], Y: v[4], Z: v[5]}
		if l := d.Len(); math.Abs(l-1) > 1e-3 {
			return nil, nil, bad(fmt.Sprintf("direction (%g, %g, %g) has length %g; a unit vector is expected", d.X, d.Y, d.Z, l))
		}
		if math.IsNaN(v[6]) || v[6] < 0 {
			return nil, nil, bad(fmt.Sprintf("tmax %v; a distance >= 0 or +Inf is expected", v[6]))
		}
		rays[i] = render.Ray{O: render.Vec3{X: v[0], Y: v[1], Z: v[2]}, D: d}
		tmax[i] = v[6]
	}
	return rays, tmax, nil
}

type traceResult struct {
	Rays      int     `json:"rays"`
	Hits      int     `json:"hits"`
	SumT      float64 `json:"sum_t"`
	BuildS    float64 `json:"build_s"`
	Seconds   float64 `json:"seconds"`
	MRaysPerS float64 `json:"mrays_per_s"`
}

// tracePass traces every ray once on threads goroutines over contiguous
// chunks; sums are combined in chunk order so they do not depend on timing.
func tracePass(ctx context.Context, s *render.Scene, rays []render.Ray, tmax []float64, occluded bool, threads int) (int, float64, error) {
	threads = max(1, min(threads, len(rays)))
	hits := make([]int, threads)
	sums := make([]float64, threads)
	var wg sync.WaitGroup
	for p := 0; p < threads; p++ {
		lo, hi := len(rays)*p/threads, len(rays)*(p+1)/threads
		wg.Add(1)
		go func() {
			defer wg.Done()
			nh, st := 0, 0.0
			for i := lo; i < hi; i++ {
				if i&0xffff == 0 && ctx.Err() != nil {
					return
				}
				if occluded {
					if s.Occluded(rays[i], tmax[i]) {
						nh++
					}
				} else if t, _, _, _, ok := s.ClosestHit(rays[i], tmax[i]); ok {
					nh++
					st += t
				}
			}
			hits[p], sums[p] = nh, st
		}()
	}
	wg.Wait()
	if err := ctx.Err(); err != nil {
		return 0, 0, err
	}
	nh, st := 0, 0.0
	for p := range hits {
		nh += hits[p]
		st += sums[p]
	}
	return nh, st, nil
}

func runTrace(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("trace", flag.ContinueOnError)
	fs.SetOutput(stderr)
	meshPath := fs.String("mesh", "", "mesh file (PLY or OBJ)")
	raysPath := fs.String("rays", "", "ray file: little-endian records of seven float32 (origin, unit direction, tmax)")
	occluded := fs.Bool("occluded", false, "any-hit queries (shadow rays) instead of closest hit")
	threads := fs.Int("threads", 1, "tracing goroutines")
	asJSON := fs.Bool("json", false, "print one JSON object")
	passes := fs.Int("passes", 5, "timed passes after one warm-up pass; the best is reported")
	builds := fs.Int("builds", 3, "BVH builds (on all cores); the fastest is reported")
	if err := fs.Parse(args); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			return errHelpShown
		}
		return badInput(err)
	}
	if fs.NArg() > 0 {
		return badInputf("trace: unexpected argument %q", fs.Arg(0))
	}
	if *meshPath == "" || *raysPath == "" {
		return badInputf("trace: -mesh and -rays are required")
	}
	if *threads < 1 || *passes < 1 || *builds < 1 {
		return badInputf("trace: -threads, -passes and -builds must be at least 1")
	}
	m, _, err := mesh.Load(*meshPath)
	if err != nil {
		return badInput(err)
	}
	rays, tmax, err := readRays(*raysPath)
	if err != nil {
		var re *RayFileError
		if errors.As(err, &re) || errors.Is(err, os.ErrNotExist) {
			return badInput(err)
		}
		return err
	}
	var s *render.Scene
	bestBuild := math.Inf(1)
	for b := 0; b < *builds; b++ {
		if err := ctx.Err(); err != nil {
			return err
		}
		s = nil
		sc, err := render.NewScene(m, 0)
		if err != nil {
			return badInput(fmt.Errorf("%s: %w", *meshPath, err))
		}
		s = sc
		bestBuild = min(bestBuild, s.BuildStats().Seconds)
	}
	res := traceResult{Rays: len(rays), BuildS: bestBuild, Seconds: math.Inf(1)}
	for p := 0; p <= *passes; p++ { // pass 0 warms up
		t0 := time.Now()
		nh, st, err := tracePass(ctx, s, rays, tmax, *occluded, *threads)
		if err != nil {
			return err
		}
		dt := time.Since(t0).Seconds()
		res.Hits, res.SumT = nh, st
		if p > 0 {
			res.Seconds = min(res.Seconds, dt)
		}
	}
	if res.Seconds > 0 {
		res.MRaysPerS = float64(res.Rays) / res.Seconds * 1e-6
	}
	if *asJSON {
		// The JSON keys are fixed; the traversal loops go to stderr.
		fmt.Fprintf(stderr, "trace: traversal %s\n", s.TraversalPath())
		b, err := json.Marshal(res)
		if err != nil {
			return err
		}
		_, err = fmt.Fprintf(stdout, "%s\n", b)
		return err
	}
	bs := s.BuildStats()
	mode := "closest hit"
	if *occluded {
		mode = "any hit"
	}
	fmt.Fprintf(stdout, "mesh        %s: %d triangles, %d nodes, %d leaves, depth %d\n", *meshPath, bs.Triangles, bs.Nodes, bs.Leaves, bs.Depth)
	fmt.Fprintf(stdout, "mode        %s, %d thread(s)\n", mode, *threads)
	fmt.Fprintf(stdout, "traversal   %s\n", s.TraversalPath())
	fmt.Fprintf(stdout, "rays        %d\n", res.Rays)
	fmt.Fprintf(stdout, "hits        %d\n", res.Hits)
	fmt.Fprintf(stdout, "sum_t       %.6f\n", res.SumT)
	fmt.Fprintf(stdout, "build_s     %.4f\n", res.BuildS)
	fmt.Fprintf(stdout, "seconds     %.4f\n", res.Seconds)
	fmt.Fprintf(stdout, "mrays_per_s %.3f\n", res.MRaysPerS)
	return nil
}

func init() {
	register(&command{
		name:    "trace",
		summary: "time BVH build and ray queries on a mesh and a ray file",
		usage: `patina trace -mesh MESH.ply -rays RAYS.bin [-occluded] [-threads N] [-json] [-passes N] [-builds N]

Loads the mesh, builds the BVH on all cores (the fastest of -builds builds is
reported), and traces every ray of the ray file: one warm-up pass, then
-passes timed passes on -threads goroutines (default 1); the best is reported.
Closest-hit mode runs Scene.ClosestHit (distance, triangle, barycentrics),
the counterpart of other kernels' single-ray query.
A ray file is a flat little-endian array of records of seven float32: origin
x y z, unit direction x y z, tmax (+Inf allowed; with -occluded, the distance
to the light). Prints rays, hits, sum_t (the sum of closest-hit distances;
0 with -occluded), build_s, seconds and mrays_per_s; with -json one JSON
object with exactly those keys (the traversal loops in use, scalar or the
vector ones of a GOEXPERIMENT=simd build, go to stderr).`,
		run: runTrace,
	})
}
