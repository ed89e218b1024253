//go:build !nogui

package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"

	fyneapp "fyne.io/fyne/v2/app"

	"patina/app"
)

const openUsage = `patina open [CAPTURE.json] [-materials M.json]

Opens the workbench, on CAPTURE.json when given (with the materials file M
loaded into its segment table). 'patina' with no arguments does the same with
no capture. The workbench needs a display; headless builds (-tags nogui) have
none.`

func init() {
	openWorkbench = func(ctx context.Context, args []string) error { return runOpen(ctx, args, os.Stdout, os.Stderr) }
	register(&command{name: "open", summary: "open the workbench (the desktop window), optionally on a capture", usage: openUsage, run: runOpen})
}

func runOpen(ctx context.Context, args []string, _, stderr io.Writer) error {
	fs := flag.NewFlagSet("open", flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() { fmt.Fprintln(stderr, openUsage) }
	mats := fs.String("materials", "", "materials file to load")
	var pos []string
	for {
		if err := fs.Parse(args); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				return errHelpShown
			}
			return badInput(err)
		}
		args = fs.Args()
		if len(args) == 0 {
			break
		}
		pos = append(pos, args[0])
		args = args[1:]
	}
	if len(pos) > 1 {
		return badInputf("open: expected at most one capture file, got %d", len(pos))
	}
	opt := app.Options{Materials: *mats}
	if len(pos) == 1 {
		if _, err := os.Stat(pos[0]); err != nil {
			return badInputf("open: %v", err)
		}
		opt.Capture = pos[0]
	}
	if os.Getenv("DISPLAY") == "" && os.Getenv("WAYLAND_DISPLAY") == "" {
		return badInputf("open: no display (DISPLAY is not set); the workbench needs a desktop session")
	}
	a := fyneapp.NewWithID("org.patina.workbench")
	app.New(ctx, a, opt).Run()
	return nil
}
