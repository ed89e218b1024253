//go:build unix

package mesh

import (
	"syscall"
	"time"
)

// processCPU is the CPU time (user + system, all threads) the process has
// used: on a shared, busy machine it says what a load costs when wall time
// cannot.
func processCPU() time.Duration {
	var ru syscall.Rusage
	if syscall.Getrusage(syscall.RUSAGE_SELF, &ru) != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
