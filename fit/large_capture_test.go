package fit

import (
	"bufio"
	"context"
	"encoding/json"
	"fmt"
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
//	PATINA_LARGE=1 go test -run '^$' -bench LargeCapture -benchtime 1x ./fit/
//
// PATINA_LARGE_SIZE (default 4000x3000) sets the photo size and
// PATINA_LARGE_COUNTS (default 25,50,100,200) the photo counts. The capture
// is the box-and-card scene of e2e_test.go rendered at that size (15
// distinct photos, 14 of them for fitting); larger counts list hard links
// of the 14 fitting photos under new names, which costs the fit exactly
// what distinct files of the same size would (every file is decoded and
// every pixel classified) without rendering hundreds of 12-megapixel
// images on the test machine.
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
		ow, oh, of := camW, camH, camF
		camW, camH, camF = w, h, 150*float64(w)/160 // the same field of view as the 160x120 original
		base = writeE2ECapture(b, dir)
		camW, camH, camF = ow, oh, of
		b.Logf("generated the %dx%d base capture in %.1f s", w, h, time.Since(t0).Seconds())
	}

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
