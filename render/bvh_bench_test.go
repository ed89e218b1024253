package render

import (
	"context"
	"encoding/binary"
	"image"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"sync"
	"syscall"
	"testing"
)

// Benchmarks of the BVH build, each query and Cast, on the Stanford bunny
// and on the 1M-triangle displaced sphere of the Embree harness. The ray sets
// follow the harness (shared/bench/embree/raybench.c): primary rays of a
// pinhole camera in 8x8 tiles, cosine-distributed bounce rays and shadow
// rays to a point light from the primary hits, and random rays in the
// bounding box. Compare runs with benchstat; the machine is noisy.

var bigSphere = sync.OnceValue(func() *Mesh { return displacedSphere(289) })

var bigScene = sync.OnceValue(func() *Scene {
	s, err := NewScene(bigSphere(), 0)
	if err != nil {
		panic(err)
	}
	return s
})

type raySet struct {
	rays []Ray
	tmax []float64
}

type benchRays struct{ primary, bounce, shadow, random raySet }

// makeBenchRays builds the four ray sets for s, w*w primary rays.
func makeBenchRays(s *Scene, w int) *benchRays {
	b := s.Bounds()
	c, size := b.Centre(), b.Size().Len()
	eye := c.Add(Vec3{0.3, 0.5, 3.2}.Mul(size / 3.5))
	fw := c.Sub(eye).Norm()
	rt := fw.Cross(Vec3{0, 1, 0}).Norm()
	up := rt.Cross(fw)
	th := math.Tan(22.5 * math.Pi / 180)
	out := &benchRays{}
	inf := math.Inf(1)
	for ty := 0; ty < w; ty += 8 {
		for tx := 0; tx < w; tx += 8 {
			for y := ty; y < ty+8 && y < w; y++ {
				for x := tx; x < tx+8 && x < w; x++ {
					d := fw.Add(rt.Mul((2*(float64(x)+0.5)/float64(w) - 1) * th)).Add(up.Mul((1 - 2*(float64(y)+0.5)/float64(w)) * th)).Norm()
					out.primary.rays = append(out.primary.rays, Ray{eye, d})
					out.primary.tmax = append(out.primary.tmax, inf)
				}
			}
		}
	}
	rng := rand.New(rand.NewPCG(1, 2))
	light := c.Add(Vec3{3, 4, 2}.Mul(size / 3.5))
	var h Hit
	for i, r := range out.primary.rays {
		if !s.Intersect(r, out.primary.tmax[i], &h) {
			continue
		}
		n := h.Ng
		if n.Dot(r.D) > 0 {
			n = n.Neg()
		}
		p := h.P.Add(n.Mul(1e-4 * size))
		f := NewFrame(n)
		u1, u2 := rng.Float64(), rng.Float64()
		rr, ph := math.Sqrt(u1), 2*math.Pi*u2
		d := f.T.Mul(rr * math.Cos(ph)).Add(f.B.Mul(rr * math.Sin(ph))).Add(n.Mul(math.Sqrt(1 - u1))).Norm()
		out.bounce.rays = append(out.bounce.rays, Ray{p, d})
		out.bounce.tmax = append(out.bounce.tmax, inf)
		l := light.Sub(p)
		out.shadow.rays = append(out.shadow.rays, Ray{p, l.Norm()})
		out.shadow.tmax = append(out.shadow.tmax, l.Len())
	}
	for range out.primary.rays {
		o := Vec3{
			b.Min.X + (b.Max.X-b.Min.X)*rng.Float64(),
			b.Min.Y + (b.Max.Y-b.Min.Y)*rng.Float64(),
			b.Min.Z + (b.Max.Z-b.Min.Z)*rng.Float64(),
		}
		out.random.rays = append(out.random.rays, Ray{o, randomDir(rng)})
		out.random.tmax = append(out.random.tmax, inf)
	}
	return out
}

var bigRays = sync.OnceValue(func() *benchRays { return makeBenchRays(bigScene(), 256) })

func benchBuild(b *testing.B, m *Mesh, threads int) {
	b.ReportAllocs()
	cpu0 := processCPU()
	for b.Loop() {
		if _, err := NewScene(m, threads); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(m.NumTriangles())*float64(b.N)/b.Elapsed().Seconds()*1e-6, "Mtris/s")
	if cpu := processCPU() - cpu0; cpu > 0 {
		b.ReportMetric(cpu/float64(b.N), "cpu-s/op")
	}
}

// benchQuery times one query kind over a ray set, single-threaded.
func benchQuery(b *testing.B, s *Scene, set raySet, kind string) {
	b.ReportAllocs()
	runtime.LockOSThread()
	defer runtime.UnlockOSThread()
	cpu0 := threadCPU()
	var h Hit
	hits := 0
	for b.Loop() {
		hits = 0
		for i, r := range set.rays {
			switch kind {
			case "occluded":
				if s.Occluded(r, set.tmax[i]) {
					hits++
				}
			case "closest":
				if _, _, _, _, ok := s.ClosestHit(r, set.tmax[i]); ok {
					hits++
				}
			default:
				if s.Intersect(r, set.tmax[i], &h) {
					hits++
				}
			}
		}
	}
	b.ReportMetric(float64(len(set.rays))*float64(b.N)/b.Elapsed().Seconds()*1e-6, "Mrays/s")
	if cpu := threadCPU() - cpu0; cpu > 0 {
		b.ReportMetric(float64(len(set.rays))*float64(b.N)/cpu*1e-6, "Mrays/cpu-s")
	}
	b.ReportMetric(float64(hits)/float64(len(set.rays)), "hit-fraction")
}

func BenchmarkBuildSphere1M(b *testing.B)        { benchBuild(b, bigSphere(), 0) }
func BenchmarkBuildSphere1M1Thread(b *testing.B) { benchBuild(b, bigSphere(), 1) }
func BenchmarkBuildBunny(b *testing.B)           { benchBuild(b, bunnyMesh(b), 0) }

func BenchmarkSphere1MPrimary(b *testing.B) {
	benchQuery(b, bigScene(), bigRays().primary, "closest")
}
func BenchmarkSphere1MPrimaryFullHit(b *testing.B) {
	benchQuery(b, bigScene(), bigRays().primary, "intersect")
}
func BenchmarkSphere1MBounce(b *testing.B) { benchQuery(b, bigScene(), bigRays().bounce, "closest") }
func BenchmarkSphere1MShadow(b *testing.B) { benchQuery(b, bigScene(), bigRays().shadow, "occluded") }
func BenchmarkSphere1MRandom(b *testing.B) { benchQuery(b, bigScene(), bigRays().random, "closest") }

func bvhBunnyBench(b *testing.B) (*Scene, *benchRays) {
	s, err := NewScene(bunnyMesh(b), 0)
	if err != nil {
		b.Fatal(err)
	}
	return s, makeBenchRays(s, 256)
}

func BenchmarkBunnyPrimary(b *testing.B) {
	s, r := bvhBunnyBench(b)
	benchQuery(b, s, r.primary, "closest")
}
func BenchmarkBunnyPrimaryFullHit(b *testing.B) {
	s, r := bvhBunnyBench(b)
	benchQuery(b, s, r.primary, "intersect")
}
func BenchmarkBunnyBounce(b *testing.B) {
	s, r := bvhBunnyBench(b)
	benchQuery(b, s, r.bounce, "closest")
}
func BenchmarkBunnyShadow(b *testing.B) {
	s, r := bvhBunnyBench(b)
	benchQuery(b, s, r.shadow, "occluded")
}
func BenchmarkBunnyRandom(b *testing.B) {
	s, r := bvhBunnyBench(b)
	benchQuery(b, s, r.random, "closest")
}

// BenchmarkCast1600x1200 casts a calibrated 1600x1200 camera (with
// distortion) at the 1M-triangle sphere on all cores.
func BenchmarkCast1600x1200(b *testing.B) {
	s := bigScene()
	c := withPose(testLenses[0], Vec3{0.6, -3.4, 0.9})
	b.ReportAllocs()
	for b.Loop() {
		if _, err := Cast(context.Background(), s, c, image.Rect(0, 0, 1600, 1200), 0); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(1600*1200*float64(b.N)/b.Elapsed().Seconds()*1e-6, "Mpixels/s")
}

// threadCPU returns the CPU time of the calling OS thread in seconds
// (Linux RUSAGE_THREAD; 0 elsewhere): on a shared, overloaded machine it is
// steadier than the wall clock.
func threadCPU() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(1, &ru); err != nil {
		return 0
	}
	return float64(ru.Utime.Nano()+ru.Stime.Nano()) * 1e-9
}

// processCPU returns the CPU time of the process in seconds (all threads).
func processCPU() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return float64(ru.Utime.Nano()+ru.Stime.Nano()) * 1e-9
}

// The harness's own ray files, when PATINA_RAYBENCH_DIR names the folder
// that `raybench gen` wrote (identical rays to the Embree timings).
func benchRayFile(b *testing.B, name, kind string) {
	dir := os.Getenv("PATINA_RAYBENCH_DIR")
	if dir == "" {
		b.Skip("PATINA_RAYBENCH_DIR not set")
	}
	data, err := os.ReadFile(filepath.Join(dir, name))
	if err != nil {
		b.Skip(err)
	}
	var set raySet
	for i := 0; i+28 <= len(data); i += 28 {
		var v [7]float64
		for k := range v {
			v[k] = float64(math.Float32frombits(binary.LittleEndian.Uint32(data[i+4*k:])))
		}
		set.rays = append(set.rays, Ray{Vec3{v[0], v[1], v[2]}, Vec3{v[3], v[4], v[5]}})
		set.tmax = append(set.tmax, v[6])
	}
	benchQuery(b, bigScene(), set, kind)
}

func BenchmarkFilePrimary(b *testing.B) { benchRayFile(b, "primary.rays", "closest") }
func BenchmarkFileBounce(b *testing.B)  { benchRayFile(b, "bounce.rays", "closest") }
func BenchmarkFileShadow(b *testing.B)  { benchRayFile(b, "shadow.rays", "occluded") }
func BenchmarkFileRandom(b *testing.B)  { benchRayFile(b, "random.rays", "closest") }
