//go:build !linux

package brdf

import "testing"

type cpuTimer struct{}

func startCPU(b *testing.B) *cpuTimer { return &cpuTimer{} }

func (c *cpuTimer) stop(b *testing.B) {}
