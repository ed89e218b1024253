//go:build linux

package fit

import (
	"syscall"
	"time"
)

// processCPU returns the CPU time (user + system) of the whole process, all
// threads together, which other load on the machine does not inflate the
// way it inflates wall time.
func processCPU() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
