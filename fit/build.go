package fit

import (
	"context"
	"fmt"
	"image"
	"math"
	"math/rand/v2"
	"sort"
	"sync"

	"patina/assets/capture"
	"patina/assets/mesh"
	"patina/assets/photo"
	"patina/brdf"
	"patina/render"
	"patina/render/colour"
)

// Rejections counts the pixels left out of the fit, by reason. A pixel of a
// photo counts once, under the first reason that applies, in this order.
// Dark pixels are split between Shadow and UnderExposed by shadow rays; when
// a photo has more than maxDarkTests of them the split is estimated from an
// evenly spread sample (the sum stays exact). Among the pixels drawn for the
// fit, those whose every light turns out occluded count as Shadow too.
type Rejections struct {
	// Border: within Options.BorderPixels of a silhouette or of another
	// segment, where a small registration error mixes surfaces.
	Border int
	// Unassigned: the triangle belongs to no segment of the capture.
	Unassigned int
	// Grazing: back-facing, or the view or a light direction within
	// acos(Options.MinCosine) of the tangent plane.
	Grazing int
	// Masked: outside the photo's mask.
	Masked int
	// Saturated: some channel at or above the decoder's saturation level,
	// and the pixel not kept as a clipped (censored) observation: with
	// Options.RejectSaturated, or when no channel could be told clipped.
	// The pixels kept are counted in ObservationSet.Clipped instead.
	Saturated int
	// UnderExposed: mean radiance below the noise floor.
	UnderExposed int
	// Shadow: in the cast shadow of the photo's only light (or of all its
	// lights).
	Shadow int
}

// Map returns the counts under the materials file's keys.
func (r Rejections) Map() map[string]int {
	m := map[string]int{}
	add := func(k string, v int) {
		if v > 0 {
			m[k] = v
		}
	}
	add("border", r.Border)
	add("unassigned", r.Unassigned)
	add("grazing", r.Grazing)
	add("masked", r.Masked)
	add("saturated", r.Saturated)
	add("under_exposed", r.UnderExposed)
	add("shadow", r.Shadow)
	return m
}

// Total is the number of rejected pixels.
func (r Rejections) Total() int {
	return r.Border + r.Unassigned + r.Grazing + r.Masked + r.Saturated + r.UnderExposed + r.Shadow
}

func (r *Rejections) add(o Rejections) {
	r.Border += o.Border
	r.Unassigned += o.Unassigned
	r.Grazing += o.Grazing
	r.Masked += o.Masked
	r.Saturated += o.Saturated
	r.UnderExposed += o.UnderExposed
	r.Shadow += o.Shadow
}

// SegmentObservations are one capture segment's observations with what the
// diagnostics need to give advice.
type SegmentObservations struct {
	Name            string
	Kind            brdf.Kind
	ReferenceAlbedo *[3]float64
	Obs             Observations
	// Floor is the noise floor (capture radiance) of the segment's
	// observations: the median over its photos.
	Floor float64

	floors    []float64
	sumNormal render.Vec3 // sum of world shading normals
	sumPos    render.Vec3 // sum of world positions
	perCamera []int       // observations per camera (capture camera index)
}

// ObservationSet is everything BuildObservations extracts from a capture.
type ObservationSet struct {
	Segments   []*SegmentObservations
	Rejections Rejections
	// PhotosUsed are the indices of the fitting photos that gave at least
	// one observation; PhotoRejections the counts per photo (by index).
	PhotosUsed      []int
	PhotoRejections map[int]Rejections
	// Clipped counts the pixels with a channel at the photo's saturation
	// level that passed every other test and were kept as candidates for
	// the fit, their clipped channels as lower bounds (censored
	// observations, see objective); like kept pixels, not all are drawn.
	// PhotoClipped has the same count per photo (by index).
	Clipped      int
	PhotoClipped map[int]int
	// Cameras and Lights are the capture's, for advice.
	cameras []capture.Camera
	lights  []capture.Light
}

// pinhole converts a capture camera to the renderer's.
func pinhole(c *capture.Camera) render.Pinhole {
	return render.Pinhole{
		Width: c.Width, Height: c.Height, Fx: c.Fx, Fy: c.Fy, Cx: c.Cx, Cy: c.Cy,
		Dist:     c.Distortion,
		Position: render.V3(c.Position[0], c.Position[1], c.Position[2]),
		Rotation: c.Rotation,
	}
}

// BuildObservations reads the capture's fitting photos one at a time and
// returns the trustworthy pixels of every segment. Photos are grouped by
// camera so the ray cast of a camera serves all its photos; only one photo
// is decoded at any time, so memory does not grow with the number of photos.
func BuildObservations(ctx context.Context, c *capture.Capture, opts Options) (*ObservationSet, error) {
	opts = opts.withDefaults()
	m, _, err := mesh.Load(c.Resolve(c.Mesh))
	if err != nil {
		return nil, err
	}
	return buildObservations(ctx, c, m, opts)
}

func buildObservations(ctx context.Context, c *capture.Capture, m *render.Mesh, opts Options) (*ObservationSet, error) {
	segs := c.EffectiveSegments(m)
	labelSeg, err := c.SegmentIndex(m)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", c.Path, err)
	}
	set := &ObservationSet{PhotoRejections: map[int]Rejections{}, PhotoClipped: map[int]int{}, cameras: c.Cameras, lights: c.Lights}
	for i, s := range segs {
		model := s.Model
		if model == "" {
			model = capture.ModelDielectric
		}
		kind, err := brdf.ParseKind(model)
		if err != nil {
			return nil, fmt.Errorf("%s: segments[%d].model: %w", c.Path, i, err)
		}
		set.Segments = append(set.Segments, &SegmentObservations{
			Name: s.Name, Kind: kind, ReferenceAlbedo: s.ReferenceAlbedo,
			perCamera: make([]int, len(c.Cameras)),
		})
	}
	// A lock the fit cannot honour fails before any photo is read.
	if _, err := resolveLocks(set.Segments, opts); err != nil {
		return nil, err
	}
	scene, err := render.NewScene(m, opts.Threads)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", c.Resolve(c.Mesh), err)
	}
	diag := scene.Bounds().Diagonal()
	offset := 1e-5 * math.Max(diag, 1e-3)

	// Fitting photos grouped by camera, cameras in the order of their first
	// photo, photos in capture order: a deterministic order.
	fitPhotos := c.PhotosByUse(capture.UseFit)
	if len(fitPhotos) == 0 {
		return nil, fmt.Errorf("%s: no photo has use %q", c.Path, capture.UseFit)
	}
	var camOrder []int
	byCam := map[int][]int{}
	for _, pi := range fitPhotos {
		_, ci := c.CameraByID(c.Photos[pi].Camera)
		if ci < 0 {
			return nil, fmt.Errorf("%s: photos[%d].camera: no camera %q", c.Path, pi, c.Photos[pi].Camera)
		}
		if _, ok := byCam[ci]; !ok {
			camOrder = append(camOrder, ci)
		}
		byCam[ci] = append(byCam[ci], pi)
	}

	done := 0
	report := func() {
		if opts.Progress != nil {
			opts.Progress(Progress{Stage: StageObservations, Photo: done, Photos: len(fitPhotos),
				Fraction: observationShare * float64(done) / float64(len(fitPhotos))})
		}
	}
	report()
	// One goroutine decodes the next photo while the current one is used:
	// the unbuffered hand-over keeps at most two decoded photos in memory
	// whatever the number of photos.
	var order []int
	for _, ci := range camOrder {
		order = append(order, byCam[ci]...)
	}
	decoded := make(chan decodedPhoto)
	stop := make(chan struct{})
	defer close(stop)
	go func() {
		for _, pi := range order {
			d := decodePhoto(c, pi)
			select {
			case decoded <- d:
			case <-stop:
				return
			}
			if d.err != nil {
				return
			}
		}
	}()
	for _, ci := range camOrder {
		cam := pinhole(&c.Cameras[ci])
		view, err := castView(ctx, scene, cam, labelSeg, opts)
		if err != nil {
			return nil, err
		}
		for _, pi := range byCam[ci] {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
			d := <-decoded
			if d.err != nil {
				return nil, d.err
			}
			if err := addPhoto(ctx, c, pi, ci, &d, view, scene, offset, set, opts); err != nil {
				return nil, err
			}
			done++
			report()
		}
	}
	for _, s := range set.Segments {
		s.Obs.poolIndirect(poolHalfWidth)
		s.Obs.ClipSigma = opts.ClipSigma
		if len(s.floors) > 0 {
			f := append([]float64(nil), s.floors...)
			sort.Float64s(f)
			s.Floor = f[len(f)/2]
		}
	}
	return set, nil
}

// observationShare is the part of the progress fraction given to reading
// photos; the fit takes the rest.
const observationShare = 0.3

// view is one camera's ray cast, with the per-pixel tests that do not
// depend on the photo.
type view struct {
	cam    render.Pinhole
	gb     *render.GBuffer
	seg    []int32 // capture segment per pixel; -1 miss, -2 unassigned triangle
	status []uint8 // viewOK or the rejection reason
	// labelSeg maps the mesh's segment labels to capture segments (for
	// the indirect rays' hits).
	labelSeg []int
}

// viewDir is the unit direction from pixel i's hit point towards the
// camera. It is computed where it is needed rather than kept per pixel:
// at 12 Mpixel a stored copy would cost 288 MB of the view.
func (v *view) viewDir(i int) render.Vec3 { return v.cam.Position.Sub(v.gb.Pos[i]).Norm() }

const (
	viewOK uint8 = iota
	viewMiss
	viewBorder
	viewUnassigned
	viewGrazing
)

func castView(ctx context.Context, scene *render.Scene, cam render.Pinhole, labelSeg []int, opts Options) (*view, error) {
	w, h := cam.Width, cam.Height
	gb, err := render.Cast(ctx, scene, cam, image.Rect(0, 0, w, h), opts.Threads)
	if err != nil {
		return nil, err
	}
	// The fit reads no depth or triangle index: let the collector have
	// them (8 bytes a pixel, 96 MB at 12 Mpixel).
	gb.Depth, gb.Tri = nil, nil
	v := &view{cam: cam, gb: gb, seg: make([]int32, w*h), status: make([]uint8, w*h), labelSeg: labelSeg}
	for i := range v.seg {
		v.seg[i] = -1
		if !gb.Hit[i] {
			continue
		}
		l := int(gb.Segment[i])
		if l >= 0 && l < len(labelSeg) && labelSeg[l] >= 0 {
			v.seg[i] = int32(labelSeg[l])
		} else if len(labelSeg) == 0 {
			v.seg[i] = 0
		} else {
			v.seg[i] = -2
		}
	}
	interior := erode(v.seg, w, h, opts.BorderPixels)
	for i := range v.seg {
		switch {
		case v.seg[i] == -1:
			v.status[i] = viewMiss
			continue
		case !interior[i]:
			v.status[i] = viewBorder
			continue
		case v.seg[i] == -2:
			v.status[i] = viewUnassigned
			continue
		}
		wo := v.viewDir(i)
		if gb.Ng[i].Dot(wo) <= 0 || gb.Ns[i].Dot(wo) < opts.MinCosine {
			v.status[i] = viewGrazing
		}
	}
	return v, nil
}

// erode marks the pixels whose (2r+1) x (2r+1) neighbourhood lies inside
// the image and has one segment value throughout: a separable test, first
// along rows then along columns, linear in the number of pixels.
func erode(seg []int32, w, h, r int) []bool {
	out := make([]bool, w*h)
	if r <= 0 {
		for i := range out {
			out[i] = true
		}
		return out
	}
	horiz := make([]bool, w*h)
	for y := 0; y < h; y++ {
		row := seg[y*w : (y+1)*w]
		for x0 := 0; x0 < w; {
			x1 := x0
			for x1 < w && row[x1] == row[x0] {
				x1++
			}
			// run [x0, x1): interior where x-r >= x0 and x+r < x1, and
			// away from the image edge.
			for x := max(x0+r, r); x < min(x1-r, w-r); x++ {
				horiz[y*w+x] = true
			}
			x0 = x1
		}
	}
	for x := 0; x < w; x++ {
		for y0 := 0; y0 < h; {
			y1 := y0
			s := seg[y0*w+x]
			for y1 < h && horiz[y1*w+x] == horiz[y0*w+x] && seg[y1*w+x] == s {
				y1++
			}
			if horiz[y0*w+x] {
				for y := max(y0+r, r); y < min(y1-r, h-r); y++ {
					out[y*w+x] = true
				}
			}
			y0 = y1
		}
	}
	return out
}

type photoLight struct {
	kind      string
	pos, dir  render.Vec3
	power     [3]float64
	radius    float64
	occluding bool
}

// maxDarkTests bounds the shadow rays cast per photo to classify dark
// pixels for the rejection counts.
const maxDarkTests = 4096

// pick is one drawn pixel of one segment.
type pick struct {
	seg int32
	pix int32
}

// photoLights resolves the lights of photo pi.
func photoLights(c *capture.Capture, pi int) ([]photoLight, error) {
	var lights []photoLight
	for k, id := range c.Photos[pi].Lights {
		l, _ := c.LightByID(id)
		if l == nil {
			return nil, fmt.Errorf("%s: photos[%d].lights[%d]: no light %q", c.Path, pi, k, id)
		}
		pl := photoLight{kind: l.Type, radius: l.Radius}
		switch l.Type {
		case capture.LightDirectional:
			d := l.UnitDirection()
			pl.dir = render.V3(d[0], d[1], d[2])
			pl.power = l.Irradiance
		default: // point, and sphere as a point at its centre: its far-field intensity is the same
			pl.pos = render.V3(l.Position[0], l.Position[1], l.Position[2])
			pl.power = l.Intensity
		}
		lights = append(lights, pl)
	}
	return lights, nil
}

// decodedPhoto is a photo read ahead of its use.
type decodedPhoto struct {
	img      *photo.Image
	mask     []bool
	exposure float64
	// clip is the linear radiance (capture scale) of the decoder's
	// saturation threshold: a channel at or above it is clipped.
	clip float64
	err  error
}

// ClipLevel is the linear radiance, in the capture's scale, at which the
// fit takes a channel of a photo decoded with d as clipped (see clipLevel);
// a view that shows the fit's pixel rules uses it with ClippedChannels.
func ClipLevel(d photo.Decoding) float64 { return clipLevel(d) }

// ClippedChannels returns the channels of a decoded pixel (linear RGB)
// that the fit treats as clipped at level clip (bit 0 red, 1 green, 2
// blue). A saturated pixel with none is left out as saturated; one with
// some is kept, its clipped channels as lower bounds.
func ClippedChannels(px []float32, clip float64) uint8 { return clipMask(px, clip) }

// clipLevel returns the linear radiance, in the capture's scale, of the
// code value at which d's decoder marks a channel saturated (the
// threshold times the white level), decoded as the photo decoder does
// (assets/photo: normalised code, black and white levels, the sRGB curve of
// IEC 61966-2-1, the exposure multiplier).
func clipLevel(d photo.Decoding) float64 {
	white, thr, e := d.WhiteLevel, d.SaturationThreshold, d.Exposure
	if white == 0 {
		white = 1
	}
	if thr == 0 {
		thr = photo.DefaultSaturationThreshold
	}
	if e == 0 {
		e = 1
	}
	u := (thr*white - d.BlackLevel) / (white - d.BlackLevel)
	if d.Encoding == "" || d.Encoding == "srgb" {
		u = colour.SRGBToLinear(u)
	}
	return u * e
}

// clipMask returns the channels of pixel px at or above the clip level
// (bit 0 red, 1 green, 2 blue). The decoder's value for the first
// saturated code is at or just above clip; the factor 1 - 1e-6 absorbs
// float32 rounding and stays far below the step to the code beneath (at
// least 1.5e-5 relative for 16-bit codes).
func clipMask(px []float32, clip float64) uint8 {
	lim := clip * (1 - 1e-6)
	var m uint8
	for c := 0; c < 3; c++ {
		if float64(px[c]) >= lim {
			m |= 1 << c
		}
	}
	return m
}

func decodePhoto(c *capture.Capture, pi int) decodedPhoto {
	dec, err := c.Decoding(pi)
	if err != nil {
		return decodedPhoto{err: fmt.Errorf("%s: photos[%d]: %w", c.Path, pi, err)}
	}
	img, err := c.LoadPhoto(pi)
	if err != nil {
		return decodedPhoto{err: err}
	}
	mask, err := c.LoadMask(pi, img.Width, img.Height)
	if err != nil {
		return decodedPhoto{err: err}
	}
	e := dec.Exposure
	if e == 0 {
		e = 1
	}
	return decodedPhoto{img: img, mask: mask, exposure: e, clip: clipLevel(dec)}
}

func addPhoto(ctx context.Context, c *capture.Capture, pi, ci int, d *decodedPhoto, v *view, scene *render.Scene, offset float64, set *ObservationSet, opts Options) error {
	img, mask := d.img, d.mask
	w, h := v.cam.Width, v.cam.Height
	lights, err := photoLights(c, pi)
	if err != nil {
		return err
	}
	floor := opts.NoiseFloor
	if floor <= 0 {
		floor = 0.002 * d.exposure
	}

	var rej Rejections
	nseg := len(set.Segments)
	cands := make([][]int32, nseg)
	var dark []int32
	for i := 0; i < w*h; i++ {
		switch pixelReason(v, i, img, mask, lights, floor, d.clip, opts) {
		case PixelKept:
			s := v.seg[i]
			cands[s] = append(cands[s], int32(i))
		case PixelClipped:
			s := v.seg[i]
			cands[s] = append(cands[s], int32(i))
			set.Clipped++
			set.PhotoClipped[pi]++
		case PixelBorder:
			rej.Border++
		case PixelUnassigned:
			rej.Unassigned++
		case PixelGrazing:
			rej.Grazing++
		case PixelMasked:
			rej.Masked++
		case PixelSaturated:
			rej.Saturated++
		case PixelUnderExposed:
			dark = append(dark, int32(i))
		}
	}

	// A dark pixel is either in the cast shadow of the photo's lights or
	// simply under-exposed; a shadow ray tells which. When there are many,
	// an evenly spread sample of maxDarkTests is tested and the counts are
	// scaled to all of them (their sum stays exact).
	if nd := len(dark); nd > 0 {
		step := max(1, (nd+maxDarkTests-1)/maxDarkTests)
		tested, shadowed := 0, 0
		for j := step / 2; j < nd; j += step {
			tested++
			if inShadow(v, int(dark[j]), lights, scene, offset) {
				shadowed++
			}
		}
		sh := int(math.Round(float64(nd) * float64(shadowed) / float64(tested)))
		rej.Shadow += sh
		rej.UnderExposed += nd - sh
	}

	// Stratified draw per segment: the candidates (in raster order, so
	// neighbours in the list are neighbours on the surface) are cut into
	// Samples equal strata and one pixel is drawn uniformly in each.
	var picks []pick
	for s, cs := range cands {
		n := len(cs)
		if opts.Samples < 0 || n <= opts.Samples {
			for _, p := range cs {
				picks = append(picks, pick{int32(s), p})
			}
			continue
		}
		rng := rand.New(rand.NewPCG(opts.Seed, uint64(pi)<<20|uint64(s)))
		k := opts.Samples
		for j := 0; j < k; j++ {
			lo := j * n / k
			hi := (j + 1) * n / k
			picks = append(picks, pick{int32(s), cs[lo+rng.IntN(hi-lo)]})
		}
	}

	// Shadow rays and observations, in parallel over fixed chunks whose
	// results are appended in chunk order (deterministic).
	const chunk = 4096
	nchunks := (len(picks) + chunk - 1) / chunk
	type chunkOut struct {
		obs    []Observations
		shadow int
		normal []render.Vec3
		pos    []render.Vec3
	}
	outs := make([]chunkOut, nchunks)
	var next sync.Mutex
	ni := 0
	var wg sync.WaitGroup
	for t := 0; t < max(1, min(opts.Threads, nchunks)); t++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				next.Lock()
				k := ni
				ni++
				next.Unlock()
				if k >= nchunks || ctx.Err() != nil {
					return
				}
				o := &outs[k]
				o.obs = make([]Observations, nseg)
				o.normal = make([]render.Vec3, nseg)
				o.pos = make([]render.Vec3, nseg)
				kbuf := make([]float32, 3*nseg)
				var rays []indirectRay
				for _, p := range picks[k*chunk : min((k+1)*chunk, len(picks))] {
					if !observe(v, int(p.pix), img, d.clip, lights, scene, offset, &o.obs[p.seg], pi) {
						o.shadow++
						continue
					}
					// A metal's indirect factors only feed its sigma
					// (ambientResponse, SegmentFit.uncertainty).
					if opts.IndirectSamples > 0 {
						q := int(p.pix)
						ng := v.gb.Ng[q]
						if ng.Dot(v.gb.Ns[q]) < 0 {
							ng = ng.Mul(-1)
						}
						ob := &o.obs[p.seg]
						metal := set.Segments[p.seg].Kind == brdf.Metal
						indirectFactors(v.gb.Pos[q], v.gb.Ns[q], ng, lights, scene, offset, v.labelSeg, nseg,
							opts.IndirectSamples, opts.Seed, pi, q, kbuf, &rays)
						ob.IndSegs = nseg
						for _, r := range rays {
							ob.AddRay(r.dir, r.seg, r.wo, r.wl, r.e, metal)
						}
						if metal {
							n := v.gb.Ns[q]
							ob.nrm = append(ob.nrm, float32(n.X), float32(n.Y), float32(n.Z))
						}
					}
					o.normal[p.seg] = o.normal[p.seg].Add(v.gb.Ns[p.pix])
					o.pos[p.seg] = o.pos[p.seg].Add(v.gb.Pos[p.pix])
				}
			}
		}()
	}
	wg.Wait()
	if err := ctx.Err(); err != nil {
		return err
	}
	used := false
	for k := range outs {
		rej.Shadow += outs[k].shadow
		for s := range outs[k].obs {
			so := set.Segments[s]
			n0 := so.Obs.Len()
			so.Obs.Append(&outs[k].obs[s])
			if added := so.Obs.Len() - n0; added > 0 {
				used = true
				so.perCamera[ci] += added
				so.sumNormal = so.sumNormal.Add(outs[k].normal[s])
				so.sumPos = so.sumPos.Add(outs[k].pos[s])
			}
		}
	}
	for s := range set.Segments {
		if len(cands[s]) > 0 {
			set.Segments[s].floors = append(set.Segments[s].floors, floor)
		}
	}
	if used {
		set.PhotosUsed = append(set.PhotosUsed, pi)
	}
	set.PhotoRejections[pi] = rej
	set.Rejections.add(rej)
	return nil
}

// PixelReason says why a pixel of a photo is kept for the fit or not.
type PixelReason uint8

// Pixel reasons, in the order the tests are made.
const (
	PixelBackground   PixelReason = iota // the ray misses the mesh
	PixelKept                            // trustworthy: a candidate for the fit
	PixelBorder                          // near a silhouette or a segment border
	PixelUnassigned                      // triangle of no segment
	PixelGrazing                         // back-facing or grazing view or light
	PixelMasked                          // outside the photo's mask
	PixelSaturated                       // clipped channel
	PixelUnderExposed                    // below the noise floor (not in shadow)
	PixelShadow                          // in the cast shadow of the photo's lights
	PixelClipped                         // a candidate with clipped channels, kept as lower bounds
)

// pixelReason applies the tests that need no shadow ray; a dark pixel comes
// back PixelUnderExposed and is split from PixelShadow by the caller. A
// saturated pixel comes back PixelClipped (a candidate whose clipped
// channels are censored observations) unless opts.RejectSaturated is set or
// none of its channels reaches clip (a decoder's mask this fit cannot
// read channel by channel).
func pixelReason(v *view, i int, img *photo.Image, mask []bool, lights []photoLight, floor, clip float64, opts Options) PixelReason {
	minCos := opts.MinCosine
	switch v.status[i] {
	case viewMiss:
		return PixelBackground
	case viewBorder:
		return PixelBorder
	case viewUnassigned:
		return PixelUnassigned
	case viewGrazing:
		return PixelGrazing
	}
	if lightGrazing(v, i, lights, minCos) {
		return PixelGrazing
	}
	if mask != nil && !mask[i] {
		return PixelMasked
	}
	if img.Saturated != nil && img.Saturated[i] {
		if opts.RejectSaturated || clipMask(img.Pix[3*i:3*i+3], clip) == 0 {
			return PixelSaturated
		}
		return PixelClipped
	}
	px := img.Pix[3*i : 3*i+3]
	if (float64(px[0])+float64(px[1])+float64(px[2]))/3 < floor {
		return PixelUnderExposed
	}
	return PixelKept
}

// RejectionMap classifies every pixel of photo pi of the capture as the fit
// would (PixelReason per pixel, row-major, width x height), for a view that
// overlays the rejections on the photo. Every dark pixel gets its shadow
// ray here. Kept pixels may still be dropped by the fit if the sample draws
// them and all their lights turn out occluded at the sampled point.
func RejectionMap(ctx context.Context, c *capture.Capture, pi int, opts Options) ([]PixelReason, int, int, error) {
	opts = opts.withDefaults()
	if pi < 0 || pi >= len(c.Photos) {
		return nil, 0, 0, fmt.Errorf("%s: photo index %d out of range (%d photos)", c.Path, pi, len(c.Photos))
	}
	m, _, err := mesh.Load(c.Resolve(c.Mesh))
	if err != nil {
		return nil, 0, 0, err
	}
	labelSeg, err := c.SegmentIndex(m)
	if err != nil {
		return nil, 0, 0, fmt.Errorf("%s: %w", c.Path, err)
	}
	scene, err := render.NewScene(m, opts.Threads)
	if err != nil {
		return nil, 0, 0, err
	}
	cam, ci := c.CameraByID(c.Photos[pi].Camera)
	if ci < 0 {
		return nil, 0, 0, fmt.Errorf("%s: photos[%d].camera: no camera %q", c.Path, pi, c.Photos[pi].Camera)
	}
	v, err := castView(ctx, scene, pinhole(cam), labelSeg, opts)
	if err != nil {
		return nil, 0, 0, err
	}
	d := decodePhoto(c, pi)
	if d.err != nil {
		return nil, 0, 0, d.err
	}
	lights, err := photoLights(c, pi)
	if err != nil {
		return nil, 0, 0, err
	}
	floor := opts.NoiseFloor
	if floor <= 0 {
		floor = 0.002 * d.exposure
	}
	offset := 1e-5 * math.Max(scene.Bounds().Diagonal(), 1e-3)
	out := make([]PixelReason, cam.Width*cam.Height)
	for i := range out {
		r := pixelReason(v, i, d.img, d.mask, lights, floor, d.clip, opts)
		if r == PixelUnderExposed && inShadow(v, i, lights, scene, offset) {
			r = PixelShadow
		}
		out[i] = r
	}
	return out, cam.Width, cam.Height, nil
}

// lightGrazing reports a light of the photo that meets the surface within
// acos(minCos) of its tangent plane from the front: the model is least
// reliable there (normals, registration). Lights behind the surface simply
// do not contribute.
func lightGrazing(v *view, i int, lights []photoLight, minCos float64) bool {
	n := v.gb.Ns[i]
	p := v.gb.Pos[i]
	for k := range lights {
		var wi render.Vec3
		if lights[k].kind == capture.LightDirectional {
			wi = lights[k].dir
		} else {
			wi = lights[k].pos.Sub(p).Norm()
		}
		if c := n.Dot(wi); c > 0 && c < minCos {
			return true
		}
	}
	return false
}

// inShadow reports whether every light of the photo that faces pixel i is
// occluded (and at least one faces it).
func inShadow(v *view, i int, lights []photoLight, scene *render.Scene, offset float64) bool {
	p, ns, ng := v.gb.Pos[i], v.gb.Ns[i], v.gb.Ng[i]
	origin := p.AddScaled(ng, offset)
	facing := 0
	for k := range lights {
		wi, tmax := lights[k].towards(p, offset)
		if ns.Dot(wi) <= 0 || ng.Dot(wi) <= 0 {
			continue
		}
		facing++
		if !scene.Occluded(render.Ray{O: origin, D: wi}, tmax) {
			return false
		}
	}
	return facing > 0
}

// towards returns the unit direction from p to the light and the distance
// a shadow ray may travel.
func (L *photoLight) towards(p render.Vec3, offset float64) (render.Vec3, float64) {
	if L.kind == capture.LightDirectional {
		return L.dir, math.Inf(1)
	}
	d := L.pos.Sub(p)
	r := d.Len()
	return d.Mul(1 / r), r - L.radius - 2*offset
}

// observe adds pixel i as an observation unless every light is shadowed or
// behind the surface; it reports whether it did. A saturated pixel's
// channels at the clip level are added as censored (lower bounds at clip).
func observe(v *view, i int, img *photo.Image, clip float64, lights []photoLight, scene *render.Scene, offset float64, obs *Observations, photo int) bool {
	pix := img.Pix
	p := v.gb.Pos[i]
	ns := v.gb.Ns[i]
	ng := v.gb.Ng[i]
	frame := render.NewFrame(ns)
	origin := p.AddScaled(ng, offset)
	nl := 0
	for k := range lights {
		L := &lights[k]
		var wi render.Vec3
		var e [3]float64
		tmax := math.Inf(1)
		if L.kind == capture.LightDirectional {
			wi = L.dir
			e = L.power
		} else {
			d := L.pos.Sub(p)
			r2 := d.Len2()
			r := math.Sqrt(r2)
			wi = d.Mul(1 / r)
			for c := range e {
				e[c] = L.power[c] / r2
			}
			tmax = r - L.radius - 2*offset
		}
		cos := ns.Dot(wi)
		if cos <= 0 || ng.Dot(wi) <= 0 {
			continue
		}
		if scene.Occluded(render.Ray{O: origin, D: wi}, tmax) {
			continue
		}
		for c := range e {
			e[c] *= cos
		}
		obs.AddLight(frame.ToLocal(wi), e)
		nl++
	}
	if nl == 0 {
		return false
	}
	q := pix[3*i : 3*i+3]
	rad := [3]float64{float64(q[0]), float64(q[1]), float64(q[2])}
	if img.Saturated != nil && img.Saturated[i] {
		m := clipMask(q, clip)
		for c := 0; c < 3; c++ {
			if m&(1<<c) != 0 {
				rad[c] = clip
			}
		}
		obs.AddCensored(frame.ToLocal(v.viewDir(i)), rad, m, photo)
		return true
	}
	obs.Add(frame.ToLocal(v.viewDir(i)), rad, photo)
	return true
}
