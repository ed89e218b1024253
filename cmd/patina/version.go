package main

import (
	"context"
	"fmt"
	"io"
	"runtime"
	"runtime/debug"
)

// Version is Patina's release version.
const Version = "0.1.0-dev"

// revision may be set at link time (-ldflags "-X main.revision=..."); the VCS
// stamp of the build info wins when the toolchain recorded one.
var revision = ""

// buildRevision returns the VCS revision the binary was built from, with a
// "+dirty" mark for a modified work tree, or "unknown".
func buildRevision() string {
	rev, dirty := revision, false
	if info, ok := debug.ReadBuildInfo(); ok {
		for _, s := range info.Settings {
			switch s.Key {
			case "vcs.revision":
				rev = s.Value
			case "vcs.modified":
				dirty = s.Value == "true"
			}
		}
	}
	if rev == "" {
		return "unknown"
	}
	if dirty {
		rev += "+dirty"
	}
	return rev
}

func init() {
	register(&command{
		name:    "version",
		summary: "print the version and the source revision",
		usage:   "patina version",
		run: func(_ context.Context, args []string, stdout, _ io.Writer) error {
			if len(args) > 0 {
				return badInputf("version takes no arguments")
			}
			fmt.Fprintf(stdout, "patina %s (revision %s, %s, %s/%s)\n", Version, buildRevision(), runtime.Version(), runtime.GOOS, runtime.GOARCH)
			return nil
		},
	})
}
