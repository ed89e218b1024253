//go:build nogui

package main

import (
	"context"
	"io"
)

func init() {
	register(&command{
		name:    "open",
		summary: "open the workbench (not in this headless build)",
		usage:   "patina open [CAPTURE.json]\n\nThis build was made with -tags nogui and has no workbench.",
		run: func(context.Context, []string, io.Writer, io.Writer) error {
			return badInputf("open: this build of patina has no workbench (built with -tags nogui); use a desktop build, or the subcommands check, fit, render")
		},
	})
}
