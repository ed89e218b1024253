//go:build !linux

package render

// adviseHugePages does nothing off Linux (see bvh_hugepage_linux.go).
func adviseHugePages[T any](s []T) {}
