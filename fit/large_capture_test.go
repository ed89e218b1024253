package fit

import (
	"bufio"
	"context"
	"encoding/json"
	"fmt"
	"image"
	"image/png"
	"os"
	"path/filepath"
	"runtime"
	"runtime/debug"
	"strconv"
	"strings"
	"testing"
	"time"

	"patina/assets/capture"
)

// BenchmarkLargeCapture fits generated captures of many large photos and
// reports the peak resident memory of the process and the time per photo,
// so that memory stays bounded (photos are streamed) and time grows
// linearly with the photo count.
//
// It is slow (minutes), so it runs only with PATINA_LARGE=1:
//
//	PATINA_LARGE=1 go test -run '^$' -bench LargeCapture -benchtime 1x -timeout 0 ./fit/
//
// PATINA_LARGE_SIZE (default 4000x3000) sets the photo size and
// PATINA_LARGE_COUNTS (default 25,50,100,200) the photo counts. The capture
// is the box-and-card scene of e2e_test.go at that size (15 distinct
// photos, 14 of them for fitting; rendered at a quarter of the size and
// enlarged, see writeLargeCapture); larger counts list hard links of the 14
// fitting photos under new names, which costs the fit exactly what
// distinct files of the same size would (every file is decoded and every
// pixel classified) without rendering hundreds of 12-megapixel images on
// the test machine. The fit's memory and time are what is measured, not
// the novelty of the photos.
//
// Unless GOMEMLIMIT is set, the fit runs under the soft memory limit the
// patina binary sets for itself (1536 MiB, defaultMemoryLimit in
// cmd/patina/main.go), so the figures are those a user of patina fit sees.
//
// peak-MiB is VmHWM of /proc/self/status after the peak was reset through
// /proc/self/clear_refs just before the fit (Linux; 0 elsewhere); the
// goal of 2 GiB is checked.
func BenchmarkLargeCapture(b *testing.B) {
	if os.Getenv("PATINA_LARGE") == "" {
		b.Skip("set PATINA_LARGE=1 to run (generates and fits captures of up to 200 large photos)")
	}
	w, h := 4000, 3000
	if s := os.Getenv("PATINA_LARGE_SIZE"); s != "" {
		if _, err := fmt.Sscanf(s, "%dx%d", &w, &h); err != nil || w < 16 || h < 12 {
			b.Fatalf("PATINA_LARGE_SIZE %q: expected WIDTHxHEIGHT", s)
		}
	}
	counts := []int{25, 50, 100, 200}
	if s := os.Getenv("PATINA_LARGE_COUNTS"); s != "" {
		counts = nil
		for _, f := range strings.Split(s, ",") {
			n, err := strconv.Atoi(strings.TrimSpace(f))
			if err != nil || n < 1 {
				b.Fatalf("PATINA_LARGE_COUNTS %q: expected positive integers", s)
			}
			counts = append(counts, n)
		}
	}

	// PATINA_LARGE_DIR keeps the generated capture between runs (its
	// generation takes minutes at 4000x3000).
	dir := os.Getenv("PATINA_LARGE_DIR")
	if dir == "" {
		dir = b.TempDir()
	} else {
		dir = filepath.Join(dir, fmt.Sprintf("%dx%d", w, h))
		must(b, os.MkdirAll(dir, 0o755))
	}
	base := filepath.Join(dir, "capture.json")
	if _, err := os.Stat(base); err != nil {
		t0 := time.Now()
		base = writeLargeCapture(b, dir, w, h)
		b.Logf("generated the %dx%d base capture in %.1f s", w, h, time.Since(t0).Seconds())
	}

	if os.Getenv("GOMEMLIMIT") == "" {
		// The value of cmd/patina/main.go's defaultMemoryLimit (a main
		// package cannot be imported).
		prev := debug.SetMemoryLimit(1536 << 20)
		defer debug.SetMemoryLimit(prev)
	}
	b.Logf("soft memory limit %d MiB", debug.SetMemoryLimit(-1)>>20)

	const goal = 2 << 30
	for _, n := range counts {
		path := largeReplica(b, base, n)
		b.Run(fmt.Sprintf("photos=%d", n), func(b *testing.B) {
			c, err := capture.Load(path)
			must(b, err)
			nFit := len(c.PhotosByUse(capture.UseFit))
			runtime.GC()
			debug.FreeOSMemory()
			resetPeakRSS()
			b.ReportAllocs()
			b.ResetTimer()
			cpu0 := processCPU()
			for i := 0; i < b.N; i++ {
				if _, err := Run(context.Background(), c, Options{Seed: 1, Threads: 2}); err != nil {
					b.Fatal(err)
				}
			}
			b.StopTimer()
			cpu := processCPU() - cpu0
			peak := peakRSS()
			b.Logf("%d photos of %dx%d: peak RSS %d MiB, %.2f s/photo wall, %.2f CPU-s/photo", nFit, w, h, peak>>20,
				b.Elapsed().Seconds()/float64(b.N*nFit), cpu.Seconds()/float64(b.N*nFit))
			b.ReportMetric(float64(peak)/(1<<20), "peak-MiB")
			b.ReportMetric(b.Elapsed().Seconds()/float64(b.N*nFit), "s/photo")
			b.ReportMetric(cpu.Seconds()/float64(b.N*nFit), "cpu-s/photo")
			if peak > goal {
				b.Errorf("%d photos of %dx%d: peak resident memory %d MiB, goal under %d MiB", nFit, w, h, peak>>20, goal>>20)
			}
		})
	}
}

// largeUpsample is the factor by which writeLargeCapture enlarges the
// photos it renders.
const largeUpsample = 4

// writeLargeCapture writes the box-and-card capture of e2e_test.go with
// w x h photos into dir and returns its path. Rendering and encoding 15
// photos of 12 megapixels took 17 minutes on the shared test machine, so
// the photos are rendered at 1/largeUpsample of the size (when w and h are
// multiples of it) and enlarged by pixel replication, and the cameras are
// scaled to the full size (fx, fy times the factor; cx = (w-1)/2 is where
// the small image's centre lands, since small pixel i covers large pixels
// k*i .. k*i+k-1). What the benchmark measures does not change: the fit
// decodes every full-size 16-bit PNG, casts a ray through every one of its
// pixels and classifies each, and its memory is the per-camera view and
// the observations, none of which depends on the photos having detail
// finer than 4 pixels (the fit's result is not checked here; a pixel next
// to an edge may disagree with the mesh by up to 2 pixels and be rejected
// as an edge pixel, as in a real capture with calibration error). One
// difference remains: the enlarged files deflate some four times smaller
// than fully rendered ones (0.5-0.9 MB instead of 2-4 MB), so reading and
// inflating them costs a little less than it would for real photos; every
// decoded pixel is still the same 12-megapixel, 16-bit work.
func writeLargeCapture(b *testing.B, dir string, w, h int) string {
	b.Helper()
	k := largeUpsample
	if w%k != 0 || h%k != 0 {
		k = 1
	}
	ow, oh, of := camW, camH, camF
	// The same field of view as the 160x120 original.
	camW, camH, camF = w/k, h/k, 150*float64(w/k)/160
	path := writeE2ECapture(b, dir)
	camW, camH, camF = ow, oh, of
	if k == 1 {
		return path
	}
	data, err := os.ReadFile(path)
	must(b, err)
	var doc map[string]any
	must(b, json.Unmarshal(data, &doc))
	for _, c := range doc["cameras"].([]any) {
		cam := c.(map[string]any)
		cam["width"], cam["height"] = w, h
		cam["fx"] = cam["fx"].(float64) * float64(k)
		cam["fy"] = cam["fy"].(float64) * float64(k)
		cam["cx"], cam["cy"] = float64(w-1)/2, float64(h-1)/2
	}
	files := map[string]bool{}
	for _, p := range doc["photos"].([]any) {
		ph := p.(map[string]any)
		files[ph["file"].(string)] = true
		if m, ok := ph["mask"].(string); ok {
			files[m] = true
		}
	}
	for name := range files {
		upsamplePNG(b, filepath.Join(dir, name), k)
	}
	out, err := json.MarshalIndent(doc, "", " ")
	must(b, err)
	must(b, os.WriteFile(path, out, 0o644))
	return path
}

// upsamplePNG enlarges the PNG file at path k times in each direction by
// pixel replication, in place. It handles the 16-bit colour photos and the
// 8-bit grey masks writeE2ECapture writes.
func upsamplePNG(b *testing.B, path string, k int) {
	b.Helper()
	f, err := os.Open(path)
	must(b, err)
	src, err := png.Decode(f)
	f.Close()
	must(b, err)
	var (
		pix    []byte
		stride int
		bpp    int
		dst    image.Image
		dpix   []byte
	)
	r := src.Bounds()
	big := image.Rect(0, 0, r.Dx()*k, r.Dy()*k)
	switch m := src.(type) {
	case *image.RGBA64:
		pix, stride, bpp = m.Pix, m.Stride, 8
		d := image.NewRGBA64(big)
		dst, dpix = d, d.Pix
	case *image.Gray:
		pix, stride, bpp = m.Pix, m.Stride, 1
		d := image.NewGray(big)
		dst, dpix = d, d.Pix
	default:
		b.Fatalf("%s: %T, expected 16-bit colour or 8-bit grey", path, src)
	}
	row := r.Dx() * k * bpp
	for y := 0; y < r.Dy(); y++ {
		out := dpix[y*k*row : y*k*row+row]
		in := pix[y*stride : y*stride+r.Dx()*bpp]
		for x := 0; x < r.Dx(); x++ {
			for j := 0; j < k; j++ {
				copy(out[(x*k+j)*bpp:], in[x*bpp:(x+1)*bpp])
			}
		}
		for j := 1; j < k; j++ {
			copy(dpix[(y*k+j)*row:], out)
		}
	}
	f, err = os.Create(path)
	must(b, err)
	must(b, png.Encode(f, dst))
	must(b, f.Close())
}

// largeReplica writes capture-N.json beside base, listing n fitting photos
// (hard links, or copies where links are not possible, of base's fitting
// photos under new names) plus base's held-out photos.
func largeReplica(b *testing.B, base string, n int) string {
	b.Helper()
	dir := filepath.Dir(base)
	data, err := os.ReadFile(base)
	must(b, err)
	var doc map[string]any
	must(b, json.Unmarshal(data, &doc))
	var fitPhotos, rest []any
	for _, p := range doc["photos"].([]any) {
		if p.(map[string]any)["use"] == "fit" {
			fitPhotos = append(fitPhotos, p)
		} else {
			rest = append(rest, p)
		}
	}
	photos := rest
	for i := 0; i < n; i++ {
		src := fitPhotos[i%len(fitPhotos)].(map[string]any)
		p := map[string]any{}
		for k, v := range src {
			p[k] = v
		}
		if i >= len(fitPhotos) {
			name := fmt.Sprintf("r%03d-%s", i, src["file"])
			dst := filepath.Join(dir, name)
			if _, err := os.Stat(dst); err != nil {
				if err := os.Link(filepath.Join(dir, src["file"].(string)), dst); err != nil {
					data, err := os.ReadFile(filepath.Join(dir, src["file"].(string)))
					must(b, err)
					must(b, os.WriteFile(dst, data, 0o644))
				}
			}
			p["file"] = name
		}
		photos = append(photos, p)
	}
	doc["photos"] = photos
	out, err := json.Marshal(doc)
	must(b, err)
	path := filepath.Join(dir, fmt.Sprintf("capture-%d.json", n))
	must(b, os.WriteFile(path, out, 0o644))
	return path
}

// resetPeakRSS resets the kernel's peak resident set size of this process
// (writing 5 to clear_refs, Linux 4.0 and later; proc(5)).
func resetPeakRSS() {
	_ = os.WriteFile("/proc/self/clear_refs", []byte("5"), 0o200)
}

// peakRSS returns VmHWM from /proc/self/status in bytes, 0 if unknown.
func peakRSS() int64 {
	f, err := os.Open("/proc/self/status")
	if err != nil {
		return 0
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		if rest, ok := strings.CutPrefix(sc.Text(), "VmHWM:"); ok {
			kb, err := strconv.ParseInt(strings.TrimSpace(strings.TrimSuffix(strings.TrimSpace(rest), "kB")), 10, 64)
			if err != nil {
				return 0
			}
			return kb << 10
		}
	}
	return 0
}
