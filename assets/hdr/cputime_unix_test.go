//go:build unix

package hdr

import (
	"syscall"
	"time"
)

// processCPU returns the user plus system CPU time of the process so far.
// Benchmarks report it beside wall time because this shared machine is
// often oversubscribed, and CPU time per operation shows the decoder's cost
// independently of how many other processes compete for the two cores.
func processCPU() (time.Duration, bool) {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0, false
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano()), true
}
