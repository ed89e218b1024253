package render

import (
	"context"
	"errors"
	"fmt"
	"math"
	"runtime"
	"sync"
	"sync/atomic"
	"time"

	"patina/brdf"
)

// Strategy selects which sampling techniques the path tracer combines for
// light that can be reached both by sampling the BRDF and by sampling the
// light (the environment and sphere lights). Point and directional lights
// can only be reached by sampling the light and are sampled in every mode.
type Strategy uint8

const (
	// MIS combines BRDF sampling and light sampling with the power
	// heuristic (beta = 2) of Veach, "Robust Monte Carlo methods for light
	// transport simulation", PhD thesis, Stanford 1997, section 9.2.4.
	MIS Strategy = iota
	// BRDFOnly finds the environment and sphere lights only by sampling
	// the BRDF (for testing).
	BRDFOnly
	// LightOnly finds the environment and sphere lights only by sampling
	// them (next-event estimation; for testing).
	LightOnly
)

// String names the strategy.
func (s Strategy) String() string {
	switch s {
	case MIS:
		return "mis"
	case BRDFOnly:
		return "brdf"
	case LightOnly:
		return "light"
	}
	return fmt.Sprintf("Strategy(%d)", uint8(s))
}

// Settings control a render. The zero value is a usable default, field by
// field.
type Settings struct {
	// SPP is the number of samples per pixel; 0 means 16.
	SPP int
	// MaxDepth is the largest number of scattering events on a path; 0
	// means 8.
	MaxDepth int
	// Direct stops paths after the first scattering event: only light that
	// reaches the visible surface directly from a light or the environment
	// (with shadows) is rendered. It is the fit's forward model.
	Direct bool
	// Strategy chooses MIS (default), BRDF-only or light-only sampling.
	Strategy Strategy
	// RouletteDepth is the number of scattering events after which Russian
	// roulette may end a path; 0 means 3.
	RouletteDepth int
	// Seed selects the random sequence; the same seed gives the same image,
	// bit for bit, whatever Threads is.
	Seed uint64
	// Threads is the number of worker goroutines; 0 means GOMAXPROCS.
	Threads int
	// TileSize is the side of the square tiles handed to workers, in
	// pixels; 0 means 16.
	TileSize int
	// TransparentBackground gives camera rays that miss the object alpha 0
	// and no radiance, instead of showing the environment.
	TransparentBackground bool
	// Emission, if set, makes mesh segment k emit radiance Emission[k]
	// (W/(m^2 sr) per channel, from both sides). Emitting surfaces are found
	// only by BRDF sampling, not by next-event estimation, so they suit
	// large dim emitters (light panels, the walls of a furnace test).
	Emission []brdf.RGB
	// lambertian replaces brdf's model by the ideal Lambertian Diffuse/pi
	// with cosine sampling (tests against analytic results only).
	lambertian bool
	// IndirectClamp, if positive, is the largest radiance (per channel,
	// W/(m^2 sr)) that any one contribution of light scattered by two or
	// more surfaces may add to a sample; a larger one is scaled down to it,
	// keeping its hue. Light seen directly or after one scattering is never
	// clamped. It trades a little energy in caustics (a glossy surface
	// focusing a small lamp onto a rough one) for freedom from isolated
	// bright pixels at low sample counts, the usual bias-for-variance
	// trade of production path tracers (common practice; discussed by
	// Kaplanyan and Dachsbacher, "Path Space Regularization for Holistic
	// and Robust Light Transport", Computer Graphics Forum 32(2), 2013).
	// 0 means no clamp.
	IndirectClamp float64
	// Adaptive, if set, lets each pixel stop taking samples before SPP
	// once its own noise is low enough (see Adaptive).
	Adaptive *Adaptive
	// OnPass, if set, is called after each progressive pass (1, 2, 4, ...
	// samples per pixel, ending at SPP) on the goroutine that called
	// Render, with the film as it stands; the film must not be kept or
	// changed after the call returns.
	OnPass func(Pass)
	// OnProgress, if set, is called after each finished tile with the
	// number of pixel samples done and the total; calls are serialised but
	// come from worker goroutines, so keep it quick.
	OnProgress func(done, total int64)
}

// Adaptive is per-pixel adaptive sampling: pixels whose samples vary
// little stop early, and the samples go where the noise is.
//
// Passes run as without it (1, 2, 4, ... samples per pixel, with one
// ending at MinSPP). After every pass that ends at MinSPP or more, each
// pixel's per-sample variance s^2 (Film.Variance times its samples, mean
// of the channels) is taken as the larger of its own and the mean over its
// 3x3 neighbourhood, and the pixel is allotted N = ceil(s^2 / Variance)
// samples in all, at least MinSPP and at most Settings.SPP; later passes
// take it only up to N. The neighbourhood guards against a pixel stopping
// because its few samples have not yet met a rare bright path that its
// neighbours' have. Every decision is made between passes from the film,
// so the image is still a function of the seed alone, whatever the number
// of threads, and a pixel given n samples has exactly the value it has in
// a render of n samples per pixel.
//
// A pixel stopped because its estimated variance is small is, on average,
// one whose samples happened to spread less, so its estimate errs low: the
// stopping rule's bias (common knowledge of sequential estimation); the
// floor MinSPP and the neighbourhood keep it small.
type Adaptive struct {
	// MinSPP is the fewest samples any pixel gets (at least 2: the
	// variance needs two).
	MinSPP int
	// Variance is the wanted variance of a pixel's mean (the square of
	// its standard error, mean of the channels, in radiance squared).
	Variance float64
	// Radius is the half-width of the neighbourhood; 0 means 1 (3x3).
	Radius int
}

func (a *Adaptive) radius() int {
	if a.Radius <= 0 {
		return 1
	}
	return a.Radius
}

// Pass describes the film after one progressive pass.
type Pass struct {
	Index   int           // 0, 1, 2, ...
	SPP     int           // samples per pixel so far
	Film    *Film         // the image so far; Film.Variance gives per-pixel variance
	Elapsed time.Duration // since Render started
}

// Render path-traces the scene seen by cam, lit by lights, with
// materials[s] the reflectance of mesh segment s (the index Hit.Segment
// reports), and returns the film. It renders in progressive passes of 1,
// 2, 4, ... samples per pixel in parallel tiles; it returns ctx.Err() (and
// the film so far) within one tile's time of a cancel.
func Render(ctx context.Context, sc *Scene, cam Camera, lights *Lights, materials []brdf.Params, s Settings) (*Film, error) {
	if sc == nil || cam == nil {
		return nil, errors.New("render: Render needs a scene and a camera")
	}
	if lights == nil {
		lights = &Lights{}
	}
	if err := lights.Validate(); err != nil {
		return nil, err
	}
	for i := range materials {
		if err := materials[i].Validate(); err != nil {
			return nil, fmt.Errorf("render: material of segment %d: %w", i, err)
		}
	}
	if m := sc.Mesh(); m != nil {
		need := max(1, len(m.SegmentLabels))
		if len(materials) < need {
			return nil, fmt.Errorf("render: the mesh has %d segments but %d materials were given", need, len(materials))
		}
	}
	if s.SPP < 0 || s.MaxDepth < 0 || s.RouletteDepth < 0 || s.Threads < 0 || s.TileSize < 0 {
		return nil, fmt.Errorf("render: negative setting (spp %d, depth %d, roulette %d, threads %d, tile %d)", s.SPP, s.MaxDepth, s.RouletteDepth, s.Threads, s.TileSize)
	}
	if a := s.Adaptive; a != nil && (a.MinSPP < 2 || !(a.Variance > 0) || math.IsInf(a.Variance, 1)) {
		return nil, fmt.Errorf("render: adaptive sampling with at least %d samples to variance %v: expected at least 2 samples and a finite positive variance", a.MinSPP, a.Variance)
	}
	if s.Strategy > LightOnly {
		return nil, fmt.Errorf("render: unknown strategy %d", s.Strategy)
	}
	if s.SPP == 0 {
		s.SPP = 16
	}
	if s.MaxDepth == 0 {
		s.MaxDepth = 8
	}
	if s.Direct {
		s.MaxDepth = 1
	}
	if s.RouletteDepth == 0 {
		s.RouletteDepth = 3
	}
	if s.Threads == 0 {
		s.Threads = runtime.GOMAXPROCS(0)
	}
	if s.TileSize == 0 {
		s.TileSize = 16
	}
	w, h := cam.Size()
	film, err := NewFilm(w, h)
	if err != nil {
		return nil, err
	}
	it := &integrator{sc: sc, cam: cam, lights: lights.Lights, env: lights.Environment, mats: materials, s: s}
	if s.Adaptive != nil {
		film.count = make([]int32, w*h)
	}
	for i := range it.lights {
		if it.lights[i].area() {
			it.areas = append(it.areas, i)
		}
	}

	ts := s.TileSize
	tilesX, tilesY := (w+ts-1)/ts, (h+ts-1)/ts
	nTiles := tilesX * tilesY
	total := int64(w) * int64(h) * int64(s.SPP)
	var done atomic.Int64
	var progMu sync.Mutex
	start := time.Now()

	for pass, spp0 := 0, 0; spp0 < s.SPP; pass++ {
		spp1 := min(max(1, 2*spp0), s.SPP)
		if a := s.Adaptive; a != nil && spp0 < a.MinSPP && spp1 > a.MinSPP {
			spp1 = a.MinSPP
		}
		var next atomic.Int64
		var wg sync.WaitGroup
		var errMu sync.Mutex
		var failed error
		var stop atomic.Bool
		for t := 0; t < min(s.Threads, nTiles); t++ {
			wg.Add(1)
			go func() {
				defer wg.Done()
				var smp Sampler
				for {
					if ctx.Err() != nil || stop.Load() {
						return
					}
					k := int(next.Add(1) - 1)
					if k >= nTiles {
						return
					}
					x0, y0 := (k%tilesX)*ts, (k/tilesX)*ts
					x1, y1 := min(x0+ts, w), min(y0+ts, h)
					taken, err := it.tile(ctx, film, &smp, x0, y0, x1, y1, spp0, spp1)
					if err != nil {
						stop.Store(true)
						errMu.Lock()
						if failed == nil {
							failed = err
						}
						errMu.Unlock()
						return
					}
					if s.OnProgress != nil {
						n := done.Add(taken)
						progMu.Lock()
						s.OnProgress(n, total)
						progMu.Unlock()
					}
				}
			}()
		}
		wg.Wait()
		if failed != nil {
			return nil, failed
		}
		if err := ctx.Err(); err != nil {
			film.Rays = it.rays.Load()
			return film, err
		}
		film.SPP = spp1
		film.Rays = it.rays.Load()
		if s.OnPass != nil {
			s.OnPass(Pass{Index: pass, SPP: spp1, Film: film, Elapsed: time.Since(start)})
		}
		spp0 = spp1
		if a := s.Adaptive; a != nil && spp1 >= a.MinSPP && spp1 < s.SPP {
			var more int64
			it.goal, more = allot(film, it.goal, a, s.SPP, s.Threads)
			if more == 0 {
				break
			}
			total = done.Load() + more
		}
	}
	return film, nil
}

// allot sets every pixel's sample goal by Adaptive's rule from the film
// as it stands (into goal, allocated if nil) and returns the goals and
// the number of samples still to take. Rows are shared among threads
// goroutines; every pixel's goal is a function of the film alone.
func allot(f *Film, goal []int32, a *Adaptive, maxSPP, threads int) ([]int32, int64) {
	w, h := f.Width, f.Height
	if goal == nil {
		goal = make([]int32, w*h)
	}
	// Per-sample variance of every pixel, mean of the channels, and its
	// sums along rows over the (2r+1)-wide window, clipped at the borders.
	r := a.radius()
	s2 := make([]float64, w*h)
	row := make([]float64, w*h)
	rows(h, threads, func(y0, y1 int) {
		for i := y0 * w; i < y1*w; i++ {
			v := f.variance(i)
			s2[i] = (v[0] + v[1] + v[2]) / 3 * float64(f.samples(i))
			if math.IsNaN(s2[i]) || math.IsInf(s2[i], 0) {
				s2[i] = math.Inf(1)
			}
		}
		for y := y0; y < y1; y++ {
			for x := 0; x < w; x++ {
				var sum float64
				for xx := max(0, x-r); xx <= min(w-1, x+r); xx++ {
					sum += s2[y*w+xx]
				}
				row[y*w+x] = sum
			}
		}
	})
	// Then along columns: the neighbourhood's mean, and the goal.
	mores := make([]int64, h)
	rows(h, threads, func(y0, y1 int) {
		for y := y0; y < y1; y++ {
			ny := min(h-1, y+r) - max(0, y-r) + 1
			var more int64
			for x := 0; x < w; x++ {
				var sum float64
				for yy := max(0, y-r); yy <= min(h-1, y+r); yy++ {
					sum += row[yy*w+x]
				}
				n := ny * (min(w-1, x+r) - max(0, x-r) + 1)
				i := y*w + x
				v := math.Max(s2[i], sum/float64(n))
				g := float64(maxSPP)
				if want := math.Ceil(v / a.Variance); want < g {
					g = want
				}
				gi := int32(max(a.MinSPP, int(g)))
				goal[i] = gi
				if c := f.count[i]; gi > c {
					more += int64(gi - c)
				}
			}
			mores[y] = more
		}
	})
	var more int64
	for _, m := range mores {
		more += m
	}
	return goal, more
}

// rows runs f over [0, h) in bands of rows on up to threads goroutines
// and waits for them.
func rows(h, threads int, f func(y0, y1 int)) {
	n := max(1, min(threads, h))
	var wg sync.WaitGroup
	for k := 0; k < n; k++ {
		y0, y1 := k*h/n, (k+1)*h/n
		wg.Add(1)
		go func() {
			defer wg.Done()
			f(y0, y1)
		}()
	}
	wg.Wait()
}

// integrator holds what every path of one render shares.
type integrator struct {
	sc     *Scene
	cam    Camera
	lights []Light
	areas  []int // indices of lights a BRDF-sampled ray can hit
	env    *Environment
	mats   []brdf.Params
	s      Settings
	rays   atomic.Int64 // rays traced (closest-hit and shadow)
	// goal is every pixel's allotted samples with adaptive sampling,
	// nil before the first allotment.
	goal []int32
}

// tile renders samples [spp0, spp1) of every pixel of a tile (with
// adaptive sampling, from the pixel's count up to its goal), in sample
// order per pixel, so the sums are independent of scheduling. It returns
// the number of samples taken.
func (it *integrator) tile(ctx context.Context, film *Film, smp *Sampler, x0, y0, x1, y1, spp0, spp1 int) (taken int64, err error) {
	var rays int64
	defer func() { it.rays.Add(rays) }()
	for y := y0; y < y1; y++ {
		if ctx.Err() != nil {
			return taken, nil
		}
		for x := x0; x < x1; x++ {
			i := y*film.Width + x
			k0, k1 := spp0, spp1
			if film.count != nil {
				k0 = int(film.count[i])
				if it.goal != nil {
					k1 = min(k1, int(it.goal[i]))
				}
			}
			for k := k0; k < k1; k++ {
				smp.Start(it.s.Seed, x, y, uint32(k))
				L, a, err := it.sample(smp, x, y, &rays)
				if err != nil {
					return taken, err
				}
				film.add(i, L, a)
				taken++
			}
		}
	}
	return taken, nil
}

// powerHeuristic is Veach's power heuristic with beta = 2 for a sample
// drawn from density pf, the other technique having density pg.
func powerHeuristic(pf, pg float64) float64 {
	if math.IsInf(pf, 1) {
		return 1
	}
	f2, g2 := pf*pf, pg*pg
	if f2+g2 == 0 {
		return 0
	}
	return f2 / (f2 + g2)
}

// sample traces one camera path through pixel (x, y) and returns its
// radiance and coverage.
func (it *integrator) sample(smp *Sampler, x, y int, rays *int64) (L brdf.RGB, alpha float64, err error) {
	// Box filter: a uniform position inside the pixel.
	fx, fy := smp.Get2D()
	ray, ok := it.cam.Ray(float64(x)+fx-0.5, float64(y)+fy-0.5)
	if !ok {
		return L, 0, nil
	}
	beta := brdf.RGB{1, 1, 1}
	var prevP Vec3         // last scattering point
	prevPdf := math.Inf(1) // BRDF density of the last bounce; +Inf for the camera ray
	var h Hit
	for depth := 0; ; depth++ {
		*rays++
		hit := it.sc.Intersect(ray, math.Inf(1), &h)
		tmax := math.Inf(1)
		if hit {
			tmax = h.T
		}
		// Sphere lights hit before the mesh.
		li := -1
		for _, k := range it.areas {
			l := &it.lights[k]
			if t, ok := raySphere(ray.O, ray.D, l.Position, l.Radius); ok && t < tmax {
				tmax, li = t, k
			}
		}
		if li >= 0 {
			l := &it.lights[li]
			w := 1.0
			if depth > 0 {
				switch it.s.Strategy {
				case MIS:
					w = powerHeuristic(prevPdf, l.pdf(prevP, ray.D))
				case LightOnly:
					w = 0
				}
			}
			if depth == 0 {
				alpha = 1
			}
			Le := l.radiance()
			it.add(&L, beta, brdf.RGB{Le[0] * w, Le[1] * w, Le[2] * w}, depth)
			return L, alpha, nil
		}
		if !hit {
			if depth == 0 {
				if it.s.TransparentBackground {
					return L, 0, nil
				}
				alpha = 1
			}
			if it.env != nil {
				w := 1.0
				if depth > 0 {
					switch it.s.Strategy {
					case MIS:
						w = powerHeuristic(prevPdf, it.env.PDF(ray.D))
					case LightOnly:
						w = 0
					}
				}
				if w > 0 {
					Le := it.env.Radiance(ray.D)
					it.add(&L, beta, brdf.RGB{Le[0] * w, Le[1] * w, Le[2] * w}, depth)
				}
			}
			return L, alpha, nil
		}
		if depth == 0 {
			alpha = 1
		}
		seg := int(h.Segment)
		if seg < 0 || seg >= len(it.mats) {
			return L, alpha, fmt.Errorf("render: the mesh has segment %d but only %d materials were given", seg, len(it.mats))
		}
		if seg < len(it.s.Emission) {
			it.add(&L, beta, it.s.Emission[seg], depth)
		}
		if depth >= it.s.MaxDepth {
			return L, alpha, nil
		}
		mat := &it.mats[seg]

		// Two-sided surfaces: orient the normals towards the viewer.
		ng, ns := h.Ng, h.Ns
		if ng.Dot(ray.D) > 0 {
			ng, ns = ng.Neg(), ns.Neg()
		}
		if ns.Dot(ray.D) >= 0 {
			ns = ng // shading normal facing away: fall back to the true one
		}
		fr := NewFrame(ns)
		wo := fr.ToLocal(ray.D.Neg())
		p := offsetPoint(h.P, ng)

		// Next-event estimation: one sample of every light.
		for k := range it.lights {
			l := &it.lights[k]
			u0, u1 := smp.Get2D()
			if l.area() && it.s.Strategy == BRDFOnly {
				continue
			}
			ls, ok := l.sample(p, u0, u1)
			if !ok || ls.wi.Dot(ng) <= 0 {
				continue
			}
			wi := fr.ToLocal(ls.wi)
			if wi.Z <= 0 {
				continue
			}
			f := it.eval(mat, wo, wi)
			wgt := wi.Z
			if ls.pdf > 0 {
				wgt /= ls.pdf
				if it.s.Strategy == MIS {
					wgt *= powerHeuristic(ls.pdf, it.pdf(mat, wo, wi))
				}
			}
			c := brdf.RGB{f[0] * ls.li[0] * wgt, f[1] * ls.li[1] * wgt, f[2] * ls.li[2] * wgt}
			if c[0] <= 0 && c[1] <= 0 && c[2] <= 0 {
				continue
			}
			*rays++
			if it.sc.Occluded(Ray{O: p, D: ls.wi}, shadowDistance(ls.dist)) {
				continue
			}
			it.add(&L, beta, c, depth+1)
		}
		if it.env != nil {
			u0, u1 := smp.Get2D()
			if it.s.Strategy != BRDFOnly {
				if d, Le, pdf := it.env.Sample(u0, u1); pdf > 0 && d.Dot(ng) > 0 {
					wi := fr.ToLocal(d)
					if wi.Z > 0 {
						f := it.eval(mat, wo, wi)
						wgt := wi.Z / pdf
						if it.s.Strategy == MIS {
							wgt *= powerHeuristic(pdf, it.pdf(mat, wo, wi))
						}
						c := brdf.RGB{f[0] * Le[0] * wgt, f[1] * Le[1] * wgt, f[2] * Le[2] * wgt}
						if c[0] > 0 || c[1] > 0 || c[2] > 0 {
							*rays++
							if !it.sc.Occluded(Ray{O: p, D: d}, math.Inf(1)) {
								it.add(&L, beta, c, depth+1)
							}
						}
					}
				}
			}
		}

		// BRDF sampling continues the path (and, with MIS or BRDF-only,
		// finds the environment and sphere lights).
		u := smp.Get3D()
		wi, pdf, weight, ok := it.sampleBRDF(mat, wo, u)
		if !ok {
			return L, alpha, nil
		}
		d := fr.ToWorld(wi)
		if d.Dot(ng) <= 0 {
			return L, alpha, nil // below the true surface: no light leaks
		}
		for c := 0; c < 3; c++ {
			beta[c] *= weight[c]
		}
		// Russian roulette (common practice): survive with probability
		// equal to the largest throughput component, at least 5%.
		rr := smp.Get1D()
		if depth+1 >= it.s.RouletteDepth {
			q := math.Min(1, math.Max(0.05, math.Max(beta[0], math.Max(beta[1], beta[2]))))
			if rr >= q {
				return L, alpha, nil
			}
			for c := 0; c < 3; c++ {
				beta[c] /= q
			}
		}
		prevP, prevPdf = p, pdf
		ray = Ray{O: p, D: d}
	}
}

// add adds beta*c to L; scattered is the number of surfaces the light
// has scattered from before reaching the camera.
func (it *integrator) add(L *brdf.RGB, beta, c brdf.RGB, scattered int) {
	v := brdf.RGB{beta[0] * c[0], beta[1] * c[1], beta[2] * c[2]}
	if m := it.s.IndirectClamp; m > 0 && scattered >= 2 {
		if peak := math.Max(v[0], math.Max(v[1], v[2])); peak > m {
			k := m / peak
			v[0], v[1], v[2] = v[0]*k, v[1]*k, v[2]*k
		}
	}
	L[0] += v[0]
	L[1] += v[1]
	L[2] += v[2]
}

func (it *integrator) eval(p *brdf.Params, wo, wi brdf.Vec) brdf.RGB {
	if it.s.lambertian {
		if wo.Z <= 0 || wi.Z <= 0 {
			return brdf.RGB{}
		}
		return brdf.RGB{p.Diffuse[0] / math.Pi, p.Diffuse[1] / math.Pi, p.Diffuse[2] / math.Pi}
	}
	return brdf.Eval(p, wo, wi)
}

func (it *integrator) pdf(p *brdf.Params, wo, wi brdf.Vec) float64 {
	if it.s.lambertian {
		if wo.Z <= 0 || wi.Z <= 0 {
			return 0
		}
		return wi.Z / math.Pi
	}
	return brdf.PDF(p, wo, wi)
}

func (it *integrator) sampleBRDF(p *brdf.Params, wo brdf.Vec, u [3]float64) (brdf.Vec, float64, brdf.RGB, bool) {
	if it.s.lambertian {
		if wo.Z <= 0 {
			return brdf.Vec{}, 0, brdf.RGB{}, false
		}
		// Cosine-weighted hemisphere (Malley's method): weight = albedo.
		r := math.Sqrt(u[1])
		sn, cs := math.Sincos(2 * math.Pi * u[2])
		z := math.Sqrt(math.Max(0, 1-u[1]))
		if z <= 0 {
			return brdf.Vec{}, 0, brdf.RGB{}, false
		}
		return brdf.Vec{X: r * cs, Y: r * sn, Z: z}, z / math.Pi, p.Diffuse, true
	}
	return brdf.Sample(p, wo, u)
}

// offsetPoint moves a hit point off its surface along the oriented
// geometric normal by a margin relative to its coordinates, so that rays
// leaving it do not hit the same triangle again (float32 vertices carry
// about 1e-7 relative error).
func offsetPoint(p, ng Vec3) Vec3 {
	m := math.Max(math.Abs(p.X), math.Max(math.Abs(p.Y), math.Abs(p.Z)))
	return p.AddScaled(ng, 1e-5*(1+m))
}

// shadowDistance shortens a shadow ray so that it stops short of the
// light's own surface.
func shadowDistance(d float64) float64 {
	if math.IsInf(d, 1) {
		return d
	}
	return d * (1 - 1e-6)
}
