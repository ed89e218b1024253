//go:build !unix

package metrics

import "time"

func processCPU() (time.Duration, bool) { return 0, false }
