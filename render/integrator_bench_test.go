package render

import (
	"context"
	"math"
	"os"
	"runtime"
	"strconv"
	"sync"
	"syscall"
	"testing"
	"time"

	"patina/brdf"
)

// benchSize is the image size of the benchmarks: 640x480 unless
// PATINA_BENCH_SCALE divides it (e.g. 4 gives 160x120 for a quick look).
func benchSize() (int, int) {
	s := 1
	if v, err := strconv.Atoi(os.Getenv("PATINA_BENCH_SCALE")); err == nil && v > 0 {
		s = v
	}
	return 640 / s, 480 / s
}

type benchScene struct {
	sc     *Scene
	cam    Camera
	lights *Lights
	mats   []brdf.Params
}

var (
	bunnyOnce, bigOnce   sync.Once
	bunnyBench, bigBench benchScene
)

// bunnyStudio is the Stanford bunny (npm package bunny, +Y up) on a grey
// floor under the built-in studio.
func bunnyStudio(b *testing.B) benchScene {
	bunnyOnce.Do(func() {
		m := bunnyMesh(b)
		lo, hi := float32(math.Inf(1)), float32(math.Inf(-1))
		var box AABB = EmptyAABB()
		for i := 0; i < m.NumVertices(); i++ {
			x, y, z := m.Vertex(uint32(i))
			box = box.Extend(Vec3{float64(x), float64(y), float64(z)})
			lo, hi = min(lo, y), max(hi, y)
		}
		// Floor: a square in the plane y = min y, facing +y.
		s := float32(box.Diagonal() * 3)
		c := box.Centre()
		base := uint32(m.NumVertices())
		for _, p := range [][2]float32{{-s, -s}, {-s, s}, {s, s}, {s, -s}} {
			m.Positions = append(m.Positions, float32(c.X)+p[0], lo, float32(c.Z)+p[1])
		}
		m.Indices = append(m.Indices, base, base+1, base+2, base, base+2, base+3)
		m.Segments = append(m.Segments, 1, 1)
		m.SegmentLabels = []SegmentLabel{{Label: 0}, {Label: 1}}
		sc, err := NewScene(m, 0)
		if err != nil {
			b.Fatal(err)
		}
		w, h, pix, err := Studio{Width: 1024}.Map()
		if err != nil {
			b.Fatal(err)
		}
		env, err := NewEnvironmentMap(w, h, pix, EnvironmentOrientation{Up: Vec3{0, 1, 0}})
		if err != nil {
			b.Fatal(err)
		}
		W, H := benchSize()
		o := Orbit{Target: c, Azimuth: 20, Elevation: 20, Distance: box.Diagonal() * 1.6, VFOV: 40, Up: Vec3{0, 1, 0}, Width: W, Height: H}
		bunnyBench = benchScene{sc: sc, cam: o.Pinhole(), lights: &Lights{Environment: env}, mats: []brdf.Params{
			{Kind: brdf.Dielectric, Diffuse: brdf.RGB{0.7, 0.62, 0.55}, Specular: brdf.RGB{0.04, 0.04, 0.04}, Roughness: 0.35},
			{Kind: brdf.Dielectric, Diffuse: brdf.RGB{0.3, 0.3, 0.3}, Specular: brdf.RGB{0.04, 0.04, 0.04}, Roughness: 0.8},
		}}
	})
	if bunnyBench.sc == nil {
		b.Skip("bunny unavailable")
	}
	return bunnyBench
}

// bigPointLight is a 1,002,252-triangle displaced sphere (the Embree
// side-by-side mesh of part 1) under one point light.
func bigPointLight(b *testing.B) benchScene {
	bigOnce.Do(func() {
		m := displacedSphere(289)
		m.SegmentLabels = []SegmentLabel{{Label: 0}, {Label: 1}, {Label: 2}}
		sc, err := NewScene(m, 0)
		if err != nil {
			b.Fatal(err)
		}
		W, H := benchSize()
		o := Orbit{Target: Vec3{}, Azimuth: 30, Elevation: 25, Distance: 3.2, VFOV: 50, Width: W, Height: H}
		bigBench = benchScene{sc: sc, cam: o.Pinhole(), lights: &Lights{Lights: []Light{{Kind: PointLight, Position: Vec3{3, -2, 4}, Intensity: brdf.RGB{30, 30, 28}}}},
			mats: []brdf.Params{
				{Kind: brdf.Dielectric, Diffuse: brdf.RGB{0.6, 0.5, 0.4}, Specular: brdf.RGB{0.04, 0.04, 0.04}, Roughness: 0.4},
				{Kind: brdf.Dielectric, Diffuse: brdf.RGB{0.6, 0.5, 0.4}, Specular: brdf.RGB{0.04, 0.04, 0.04}, Roughness: 0.4},
				{Kind: brdf.Dielectric, Diffuse: brdf.RGB{0.6, 0.5, 0.4}, Specular: brdf.RGB{0.04, 0.04, 0.04}, Roughness: 0.4},
			}}
	})
	return bigBench
}

// cpuSeconds is the process's user plus system CPU time. The machine the
// benchmarks run on is shared, so figures per CPU second are quoted beside
// wall-clock ones.
func cpuSeconds() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return math.NaN()
	}
	return float64(ru.Utime.Sec+ru.Stime.Sec) + float64(ru.Utime.Usec+ru.Stime.Usec)*1e-6
}

// benchPaths renders spp samples per pixel per iteration and reports
// camera paths per second.
func benchPaths(b *testing.B, s benchScene, st Settings) {
	b.ReportAllocs()
	w, h := s.cam.Size()
	b.ResetTimer()
	c0 := cpuSeconds()
	var rays int64
	for i := 0; i < b.N; i++ {
		st.Seed = uint64(i)
		f, err := Render(context.Background(), s.sc, s.cam, s.lights, s.mats, st)
		if err != nil {
			b.Fatal(err)
		}
		rays += f.Rays
	}
	cpu := cpuSeconds() - c0
	paths := float64(w*h*st.SPP) * float64(b.N)
	b.ReportMetric(paths/b.Elapsed().Seconds(), "paths/s")
	b.ReportMetric(paths/cpu, "paths/cpu-s")
	b.ReportMetric(float64(rays)/cpu/1e6, "Mrays/cpu-s")
	b.ReportMetric(float64(rays)/paths, "rays/path")
}

func BenchmarkPathsBunnyStudio(b *testing.B) {
	benchPaths(b, bunnyStudio(b), Settings{SPP: 1})
}

func BenchmarkPathsBunnyStudioDirect(b *testing.B) {
	benchPaths(b, bunnyStudio(b), Settings{SPP: 1, Direct: true})
}

func BenchmarkPaths1MPointLight(b *testing.B) {
	benchPaths(b, bigPointLight(b), Settings{SPP: 1})
}

// relMSE is the mean over pixels and channels of (x - r)^2 / (r^2 + 1e-2),
// the relative mean squared error with the usual small offset for dark
// pixels (common practice in rendering comparisons). The reference's own
// noise, estimated from its variance, is subtracted: it adds to the
// squared difference of two independent estimates.
func relMSE(f, ref *Film) float64 {
	s := 0.0
	for y := 0; y < f.Height; y++ {
		for x := 0; x < f.Width; x++ {
			a, _ := f.Pixel(x, y)
			r, _ := ref.Pixel(x, y)
			v := ref.Variance(x, y)
			for c := 0; c < 3; c++ {
				d := a[c] - r[c]
				s += (d*d - v[c]) / (r[c]*r[c] + 1e-2)
			}
		}
	}
	return s / float64(3*f.Width*f.Height)
}

// refSPP is the sample count of the long reference render; it can be
// lowered with PATINA_BENCH_REFSPP for a quick run.
func refSPP() int {
	if v, err := strconv.Atoi(os.Getenv("PATINA_BENCH_REFSPP")); err == nil && v > 0 {
		return v
	}
	return 1024
}

var refFilms sync.Map

// timeToError renders in progressive passes until the relative MSE against
// a long MIS reference (different seed) falls to 1e-3 and reports the time
// and the samples per pixel it took.
func timeToError(b *testing.B, s benchScene, st Settings, name string) {
	refAny, ok := refFilms.Load(name)
	if !ok {
		rs := st
		rs.SPP, rs.Strategy, rs.Seed = refSPP(), MIS, 1<<40
		f, err := Render(context.Background(), s.sc, s.cam, s.lights, s.mats, rs)
		if err != nil {
			b.Fatal(err)
		}
		refFilms.Store(name, f)
		refAny = f
	}
	ref := refAny.(*Film)
	const target = 1e-3
	var secs, spp, cpu float64
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		ctx, cancel := context.WithCancel(context.Background())
		start := time.Now()
		c0 := cpuSeconds()
		var cPrev float64
		reached := false
		var paused time.Duration
		st.SPP, st.Seed = 1<<16, uint64(i+1)
		var tPrev, ePrev, sPrev float64
		st.OnPass = func(p Pass) {
			t0 := time.Now()
			e := relMSE(p.Film, ref)
			paused += time.Since(t0) // the error computation is not render time
			t := (time.Since(start) - paused).Seconds()
			c := cpuSeconds() - c0 - paused.Seconds() // the error computation runs on one core
			if reached {
				return
			}
			if e <= target {
				reached = true
				// Passes double the sample count; interpolate between the
				// last pass above the target and this one with the 1/N
				// law of Monte Carlo error.
				if ePrev > 0 {
					f := ePrev / target
					secs += tPrev * f
					spp += sPrev * f
					cpu += cPrev * f
				} else {
					secs += t
					spp += float64(p.SPP)
					cpu += c
				}
				cancel()
				return
			}
			tPrev, ePrev, sPrev, cPrev = t, e, float64(p.SPP), c
		}
		Render(ctx, s.sc, s.cam, s.lights, s.mats, st)
		cancel()
		if !reached {
			b.Fatal("target error not reached")
		}
	}
	b.ReportMetric(secs/float64(b.N), "s-to-1e-3")
	b.ReportMetric(spp/float64(b.N), "spp-to-1e-3")
	b.ReportMetric(cpu/float64(b.N), "cpu-s-to-1e-3")
}

func BenchmarkTimeToErrorBunnyStudioMIS(b *testing.B) {
	timeToError(b, bunnyStudio(b), Settings{Strategy: MIS}, "bunny")
}

func BenchmarkTimeToErrorBunnyStudioBRDF(b *testing.B) {
	timeToError(b, bunnyStudio(b), Settings{Strategy: BRDFOnly}, "bunny")
}

func BenchmarkTimeToError1MPointLight(b *testing.B) {
	timeToError(b, bigPointLight(b), Settings{}, "big")
}

// BenchmarkRawRays1M traces the same kinds of rays as the path tracer on
// the 1M-triangle scene without any shading: per pixel a camera ray, a
// shadow ray to the light and one diffuse bounce ray. Comparing its
// Mrays/cpu-s with BenchmarkPaths1MPointLight's gives the integrator's
// overhead over bare ray queries.
func BenchmarkRawRays1M(b *testing.B) {
	s := bigPointLight(b)
	w, h := s.cam.Size()
	light := s.lights.Lights[0].Position
	b.ReportAllocs()
	b.ResetTimer()
	c0 := cpuSeconds()
	var rays int64
	var smp Sampler
	var hit Hit
	for i := 0; i < b.N; i++ {
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				r, _ := s.cam.Ray(float64(x), float64(y))
				rays++
				if !s.sc.Intersect(r, math.Inf(1), &hit) {
					continue
				}
				ng := hit.Ng
				if ng.Dot(r.D) > 0 {
					ng = ng.Neg()
				}
				p := offsetPoint(hit.P, ng)
				d := light.Sub(p)
				dist := d.Len()
				rays += 2
				s.sc.Occluded(Ray{O: p, D: d.Mul(1 / dist)}, dist)
				smp.Start(uint64(i), x, y, 0)
				u0, u1 := smp.Get2D()
				rr := math.Sqrt(u0)
				fr := NewFrame(ng)
				dir := fr.ToWorld(brdf.Vec{X: rr * math.Cos(2*math.Pi*u1), Y: rr * math.Sin(2*math.Pi*u1), Z: math.Sqrt(1 - u0)})
				s.sc.Intersect(Ray{O: p, D: dir}, math.Inf(1), &hit)
			}
		}
	}
	b.ReportMetric(float64(rays)/(cpuSeconds()-c0)/1e6, "Mrays/cpu-s")
}

// BenchmarkSamplerPath draws what a two-bounce path under one light
// draws: the pixel position, and per bounce a light sample, a BRDF sample
// and a roulette number.
func BenchmarkSamplerPath(b *testing.B) {
	var s Sampler
	var sink float64
	c0 := cpuSeconds()
	for i := 0; i < b.N; i++ {
		s.Start(7, i&1023, i>>10&1023, uint32(i))
		x, y := s.Get2D()
		sink += x + y
		for k := 0; k < 2; k++ {
			u0, u1 := s.Get2D()
			u := s.Get3D()
			sink += u0 + u1 + u[0] + u[1] + u[2] + s.Get1D()
		}
	}
	b.ReportMetric((cpuSeconds()-c0)*1e9/float64(b.N), "cpu-ns/op")
	if sink == 0 {
		b.Fatal("no numbers drawn")
	}
}

// BenchmarkAllot1280x960 is one adaptive allotment of a 1280x960 film (the
// step between passes), on one thread and on all.
func BenchmarkAllot1280x960(b *testing.B) {
	f, err := NewFilm(1280, 960)
	if err != nil {
		b.Fatal(err)
	}
	f.count = make([]int32, 1280*960)
	for i := 0; i < 1280*960; i++ {
		for k := 0; k < 4; k++ {
			v := float64((i*7+k*13)%17) * 0.01
			f.add(i, brdf.RGB{v, v, v}, 1)
		}
	}
	f.SPP = 4
	a := &Adaptive{MinSPP: 4, Variance: 1e-4}
	for _, th := range []int{1, 0} {
		name := "all"
		if th == 1 {
			name = "one"
		}
		b.Run(name, func(b *testing.B) {
			if th == 0 {
				th = runtime.GOMAXPROCS(0)
			}
			var goal []int32
			for b.Loop() {
				goal, _ = allot(f, goal, a, 64, th)
			}
		})
	}
}
