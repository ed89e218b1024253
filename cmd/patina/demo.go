package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"strconv"

	"patina/assets/demo"
)

func init() {
	register(&command{
		name:    "demo",
		summary: "make the built-in demo capture: the jar in the dome",
		usage: `patina demo [-out DIR] [-size small|full] [-seed S] [-threads N] [-force]

Writes DIR/capture.json, DIR/mesh/jar.ply, DIR/photos/*.png and DIR/truth.json
(the true materials, which nothing in the capture points to). The files depend
only on the size and the seed. A non-empty DIR is refused unless -force.

  -out DIR      output directory (default demo)
  -size SIZE    small (320x240, 20 photos) or full (1280x960, 48 photos)
  -seed S       random seed (default 1)
  -threads N    worker threads (default: all cores)
  -force        write into a non-empty directory`,
		run: runDemo,
	})
}

func runDemo(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("demo", flag.ContinueOnError)
	fs.SetOutput(stderr)
	out := fs.String("out", "demo", "output directory")
	size := fs.String("size", "small", "small or full")
	seed := fs.Uint64("seed", 1, "random seed")
	threads := fs.Int("threads", 0, "worker threads")
	force := fs.Bool("force", false, "write into a non-empty directory")
	if err := fs.Parse(args); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			return errHelpShown
		}
		return badInput(err)
	}
	if fs.NArg() > 0 {
		return badInputf("demo: unexpected argument %q", fs.Arg(0))
	}
	sz, err := demo.ParseSize(*size)
	if err != nil {
		return badInputf("demo: -size: %v", err)
	}
	fmt.Fprintf(stdout, "Making the %s demo capture in %s (seed %d)\n", sz, *out, *seed)
	res, err := demo.Generate(ctx, *out, demo.Options{
		Size: sz, Seed: *seed, Threads: *threads, Force: *force,
		Progress: func(done, total int, file string) {
			fmt.Fprintf(stdout, "  photo %2d/%d  %s\n", done, total, file)
		},
	})
	if err != nil {
		if errors.Is(err, demo.ErrNotEmpty) {
			return badInput(err)
		}
		return err
	}
	fmt.Fprintf(stdout, "Wrote %s\n  mesh   %s (%d triangles)\n  photos %d (%d held out)\n  truth  %s\n  %s on disk in %.1f s\n",
		res.Capture, res.Mesh, res.Triangles, res.Photos, res.Holdout, res.Truth, humanBytes(res.Bytes), res.Elapsed.Seconds())
	return nil
}

func humanBytes(n int64) string {
	switch {
	case n >= 1<<30:
		return strconv.FormatFloat(float64(n)/(1<<30), 'f', 2, 64) + " GiB"
	case n >= 1<<20:
		return strconv.FormatFloat(float64(n)/(1<<20), 'f', 1, 64) + " MiB"
	case n >= 1<<10:
		return strconv.FormatFloat(float64(n)/(1<<10), 'f', 1, 64) + " KiB"
	}
	return strconv.Itoa(int(n)) + " B"
}
