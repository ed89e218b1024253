//go:build !unix

package hdr

import "time"

func processCPU() (time.Duration, bool) { return 0, false }
