//go:build linux

package brdf

import (
	"runtime"
	"syscall"
	"testing"
	"time"
)

// threadCPU returns the CPU time consumed so far by the calling OS thread
// (getrusage RUSAGE_THREAD, Linux).
func threadCPU() time.Duration {
	var ru syscall.Rusage
	const rusageThread = 1 // RUSAGE_THREAD, linux/resource.h
	if err := syscall.Getrusage(rusageThread, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

// cpuTimer reports, besides the wall-clock ns/op, the CPU time of the
// benchmark's thread per operation as "cpu-ns/op": on a shared machine
// other processes stretch the wall clock but not the thread's own CPU time.
type cpuTimer struct{ start time.Duration }

func startCPU(b *testing.B) *cpuTimer {
	runtime.LockOSThread()
	return &cpuTimer{threadCPU()}
}

func (c *cpuTimer) stop(b *testing.B) {
	d := threadCPU() - c.start
	runtime.UnlockOSThread()
	if b.N > 0 {
		b.ReportMetric(float64(d.Nanoseconds())/float64(b.N), "cpu-ns/op")
	}
}
