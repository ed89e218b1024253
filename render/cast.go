package render

import (
	"context"
	"errors"
	"fmt"
	"image"
	"math"
	"runtime"
	"sync"
	"sync/atomic"
)

// MaxCastPixels bounds the region of one Cast (the buffers take about 90
// bytes a pixel).
const MaxCastPixels = 1 << 28

// GBuffer holds per-pixel geometry of a camera view: the closest hit of the
// ray through each pixel centre. Buffers are row-major over the region,
// index (y-Origin.Y)*Width + (x-Origin.X), array-of-structs Vec3 in
// float64 for positions and normals.
type GBuffer struct {
	Origin        image.Point // pixel coordinates of the region's top-left pixel
	Width, Height int         // region size
	Hit           []bool      // the pixel's ray hit the scene
	Pos           []Vec3      // world hit point (zero on a miss)
	Ns            []Vec3      // unit shading normal (zero on a miss)
	Ng            []Vec3      // unit geometric normal as wound (zero on a miss)
	Segment       []int32     // segment of the hit triangle, -1 on a miss
	Depth         []float32   // distance from the camera centre along the ray, metres; +Inf on a miss
	Tri           []int32     // mesh triangle index, -1 on a miss
}

// Index returns the buffer index of pixel (x, y), which must lie in the region.
func (g *GBuffer) Index(x, y int) int { return (y-g.Origin.Y)*g.Width + (x - g.Origin.X) }

// Cast fills a GBuffer for region (in pixel coordinates of cam) by tracing
// the ray through each pixel centre, in parallel over rows on threads
// goroutines (<= 0: one per core). The result does not depend on threads.
// It stops early with ctx's error when ctx is cancelled.
func Cast(ctx context.Context, s *Scene, cam Camera, region image.Rectangle, threads int) (*GBuffer, error) {
	if s == nil || cam == nil {
		return nil, errors.New("render: Cast: nil scene or camera")
	}
	region = region.Canon()
	w, h := region.Dx(), region.Dy()
	if int64(w)*int64(h) > MaxCastPixels {
		return nil, fmt.Errorf("render: Cast: region %v has %d pixels, more than the limit %d", region, int64(w)*int64(h), MaxCastPixels)
	}
	switch o := cam.(type) {
	case Orbit:
		cam = o.Pinhole() // once, not per pixel
	case *Orbit:
		cam = o.Pinhole()
	}
	n := w * h
	g := &GBuffer{
		Origin: region.Min, Width: w, Height: h,
		Hit: make([]bool, n), Pos: make([]Vec3, n), Ns: make([]Vec3, n), Ng: make([]Vec3, n),
		Segment: make([]int32, n), Depth: make([]float32, n), Tri: make([]int32, n),
	}
	if threads <= 0 {
		threads = runtime.GOMAXPROCS(0)
	}
	threads = max(1, min(threads, h))
	var next atomic.Int64
	var wg sync.WaitGroup
	inf := float32(math.Inf(1))
	for k := 0; k < threads; k++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			var hit Hit
			for {
				row := int(next.Add(1) - 1)
				if row >= h || ctx.Err() != nil {
					return
				}
				py := region.Min.Y + row
				for col := 0; col < w; col++ {
					i := row*w + col
					g.Segment[i], g.Tri[i], g.Depth[i] = -1, -1, inf
					r, ok := cam.Ray(float64(region.Min.X+col), float64(py))
					if !ok || !s.Intersect(r, math.Inf(1), &hit) {
						continue
					}
					g.Hit[i] = true
					g.Pos[i], g.Ns[i], g.Ng[i] = hit.P, hit.Ns, hit.Ng
					g.Segment[i], g.Tri[i], g.Depth[i] = hit.Segment, hit.Tri, float32(hit.T)
				}
			}
		}()
	}
	wg.Wait()
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	return g, nil
}
