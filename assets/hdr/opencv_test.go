package hdr

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"patina/render/refcheck"
)

// The cross-checks in this file run OpenCV (Debian python3-opencv, 4.x)
// through render/refcheck. OpenCV's RGBE reader (rgbe2float in
// modules/imgcodecs/src/rgbe.cpp) decodes m 2^(e-136), half a step below
// Radiance's (m + 0.5) 2^(e-136) that Patina uses; its writer truncates like
// Radiance's. OpenCV images are BGR; it writes flat scanlines below width 8
// and above 32767, and PFM rows bottom to top with scale -1 (little-endian).

const cvScript = `
import sys
import numpy as np
import cv2

def dump(img, path):
    if img.ndim == 3:
        img = img[:, :, ::-1]  # BGR -> RGB
    np.ascontiguousarray(img, dtype='<f4').tofile(path)
    print(img.shape[1], img.shape[0], 1 if img.ndim == 2 else img.shape[2], img.dtype)

def load(path, w, h, ch):
    a = np.fromfile(path, dtype='<f4')
    return a.reshape((h, w, ch)) if ch == 3 else a.reshape((h, w))

# Jobs are separated by '+' so one interpreter start serves a whole test.
jobs, cur = [], []
for a in sys.argv[1:]:
    if a == '+':
        jobs.append(cur)
        cur = []
    else:
        cur.append(a)
jobs.append(cur)
for job in jobs:
    mode = job[0]
    if mode == 'read_hdr':
        img = cv2.imread(job[1], cv2.IMREAD_ANYDEPTH | cv2.IMREAD_COLOR)
        assert img is not None and img.dtype == np.float32, 'OpenCV could not read ' + job[1]
        dump(img, job[2])
    elif mode == 'read_pfm':
        img = cv2.imread(job[1], cv2.IMREAD_UNCHANGED)
        assert img is not None and img.dtype == np.float32, 'OpenCV could not read ' + job[1]
        dump(img, job[2])
    elif mode == 'write':
        src, w, h, ch, out = job[1], int(job[2]), int(job[3]), int(job[4]), job[5]
        a = load(src, w, h, ch)
        if ch == 3:
            a = a[:, :, ::-1]  # RGB -> BGR
        assert cv2.imwrite(out, np.ascontiguousarray(a)), 'imwrite failed'
        print('ok')
`

func requireCV(t *testing.T) {
	t.Helper()
	refcheck.RequirePython(t, map[string]string{"cv2": "python3-opencv", "numpy": "python3-numpy"})
}

func writeRaw(t *testing.T, path string, v []float32) {
	t.Helper()
	b := make([]byte, 0, 4*len(v))
	for _, f := range v {
		b = binary.LittleEndian.AppendUint32(b, math.Float32bits(f))
	}
	if err := os.WriteFile(path, b, 0o644); err != nil {
		t.Fatal(err)
	}
}

func readRaw(t *testing.T, path string, n int) []float32 {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if len(b) != 4*n {
		t.Fatalf("%s: %d bytes, want %d", path, len(b), 4*n)
	}
	v := make([]float32, n)
	for i := range v {
		v[i] = math.Float32frombits(binary.LittleEndian.Uint32(b[4*i:]))
	}
	return v
}

// runCV runs the OpenCV jobs in one interpreter and returns the lines they
// printed, one per job.
func runCV(t *testing.T, jobs ...[]string) []string {
	t.Helper()
	var args []string
	for i, j := range jobs {
		if i > 0 {
			args = append(args, "+")
		}
		args = append(args, j...)
	}
	out := strings.Split(strings.TrimSpace(string(refcheck.RunPython(t, cvScript, args...))), "\n")
	if len(out) != len(jobs) {
		t.Fatalf("OpenCV printed %d lines for %d jobs: %q", len(out), len(jobs), out)
	}
	return out
}

var rgbeSizes = [][2]int{{5, 3}, {64, 7}, {40000, 1}}

// TestOpenCVReadsPatinaRGBE: files written by Patina, read by OpenCV, hold
// exactly the truncated mantissas (OpenCV returns m 2^(e-136)), and Patina
// reads the same file exactly half a step higher, (m + 0.5) 2^(e-136).
func TestOpenCVReadsPatinaRGBE(t *testing.T) {
	requireCV(t)
	dir := t.TempDir()
	var jobs [][]string
	for _, sz := range rgbeSizes {
		path := filepath.Join(dir, fmt.Sprintf("p%d.hdr", sz[0]))
		if err := WriteFile(path, testImage(sz[0], sz[1], 11)); err != nil {
			t.Fatal(err)
		}
		jobs = append(jobs, []string{"read_hdr", path, path + ".raw"})
	}
	shapes := runCV(t, jobs...)
	for k, sz := range rgbeSizes {
		m := testImage(sz[0], sz[1], 11)
		path := filepath.Join(dir, fmt.Sprintf("p%d.hdr", sz[0]))
		if shapes[k] != fmt.Sprintf("%d %d 3 float32", sz[0], sz[1]) {
			t.Fatalf("OpenCV shape %q", shapes[k])
		}
		cv := readRaw(t, path+".raw", len(m.Pix))
		own, err := ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		for i := 0; i < len(m.Pix)/3; i++ {
			x := m.Pix[3*i : 3*i+3]
			s := rgbeStep(x[0], x[1], x[2])
			for c := 0; c < 3; c++ {
				trunc := math.Floor(float64(x[c])/s) * s
				if s == 0 {
					trunc = 0
				}
				if float64(cv[3*i+c]) != trunc {
					t.Fatalf("width %d pixel %d channel %d: wrote %g, OpenCV read %g, want floor to step %g = %g",
						sz[0], i, c, x[c], cv[3*i+c], s, trunc)
				}
				if d := float64(own.Pix[3*i+c]) - float64(cv[3*i+c]); d != s/2 {
					t.Fatalf("width %d pixel %d channel %d: Patina reads %g, OpenCV %g: difference %g, want half a step %g",
						sz[0], i, c, own.Pix[3*i+c], cv[3*i+c], d, s/2)
				}
			}
		}
	}
}

// TestPatinaReadsOpenCVRGBE: files written by OpenCV (flat below width 8,
// run-length at 8 and above) read by Patina give OpenCV's own reading plus
// half a step, and OpenCV's header is accepted.
func TestPatinaReadsOpenCVRGBE(t *testing.T) {
	requireCV(t)
	dir := t.TempDir()
	sizes := [][2]int{{4, 3}, {8, 2}, {97, 5}}
	var jobs [][]string
	for _, sz := range sizes {
		src := filepath.Join(dir, fmt.Sprintf("src%d.raw", sz[0]))
		writeRaw(t, src, testImage(sz[0], sz[1], 23).Pix)
		path := filepath.Join(dir, fmt.Sprintf("cv%d.hdr", sz[0]))
		jobs = append(jobs, []string{"write", src, fmt.Sprint(sz[0]), fmt.Sprint(sz[1]), "3", path},
			[]string{"read_hdr", path, path + ".raw"})
	}
	runCV(t, jobs...)
	for _, sz := range sizes {
		m := testImage(sz[0], sz[1], 23)
		path := filepath.Join(dir, fmt.Sprintf("cv%d.hdr", sz[0]))
		data, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		got, info, err := DecodeRGBE(bytes.NewReader(data))
		if err != nil {
			t.Fatalf("Patina cannot read OpenCV's file: %v\n%q", err, data[:min(len(data), 80)])
		}
		if !bytes.HasPrefix(data, []byte("#?"+info.ProgramType+"\n")) || !strings.Contains(string(data[:info.DataOffset]), "FORMAT=32-bit_rle_rgbe\n") {
			t.Errorf("OpenCV header %q", data[:info.DataOffset])
		}
		if body := data[info.DataOffset:]; (body[0] == 2 && body[1] == 2) != (sz[0] >= 8) {
			t.Errorf("width %d: OpenCV run-length use differs from the documented rule", sz[0])
		}
		cv := readRaw(t, path+".raw", len(m.Pix))
		for i := 0; i < len(m.Pix)/3; i++ {
			x := m.Pix[3*i : 3*i+3]
			s := rgbeStep(x[0], x[1], x[2])
			for c := 0; c < 3; c++ {
				if d := float64(got.Pix[3*i+c]) - float64(cv[3*i+c]); d != s/2 {
					t.Fatalf("width %d pixel %d channel %d: Patina %g, OpenCV %g, difference %g, want %g",
						sz[0], i, c, got.Pix[3*i+c], cv[3*i+c], d, s/2)
				}
			}
		}
	}
}

// TestPFMAgainstOpenCV: PFM is float32 stored exactly, so OpenCV and Patina
// must agree bit for bit in both directions, colour and grey, both byte
// orders (OpenCV reads the order from the scale's sign).
func TestPFMAgainstOpenCV(t *testing.T) {
	requireCV(t)
	dir := t.TempDir()
	m := testImage(6, 5, 31)
	opts := []PFMOptions{{}, {BigEndian: true}, {Grey: true}, {Grey: true, BigEndian: true}}
	var jobs [][]string
	for _, opt := range opts {
		path := filepath.Join(dir, fmt.Sprintf("p-%v-%v.pfm", opt.Grey, opt.BigEndian))
		var buf bytes.Buffer
		if err := EncodePFMWith(&buf, m, opt); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
			t.Fatal(err)
		}
		jobs = append(jobs, []string{"read_pfm", path, path + ".raw"})
	}
	grey := make([]float32, len(m.Pix)/3)
	for i := range grey {
		grey[i] = m.Pix[3*i+1]
	}
	for _, ch := range []int{3, 1} {
		src := filepath.Join(dir, fmt.Sprintf("src%d.raw", ch))
		vals := m.Pix
		if ch == 1 {
			vals = grey
		}
		writeRaw(t, src, vals)
		jobs = append(jobs, []string{"write", src, "6", "5", fmt.Sprint(ch), filepath.Join(dir, fmt.Sprintf("cv%d.pfm", ch))})
	}
	shapes := runCV(t, jobs...)
	for k, opt := range opts {
		path := filepath.Join(dir, fmt.Sprintf("p-%v-%v.pfm", opt.Grey, opt.BigEndian))
		own, err := ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		n := len(m.Pix)
		if opt.Grey {
			n /= 3
		}
		cv := readRaw(t, path+".raw", n)
		for i := 0; i < n; i++ {
			want := own.Pix[i]
			if opt.Grey {
				want = own.Pix[3*i]
			}
			if cv[i] != want {
				t.Fatalf("%+v (%s): sample %d: OpenCV %v, Patina %v", opt, shapes[k], i, cv[i], want)
			}
		}
	}
	// OpenCV wrote these; Patina reads them.
	for _, ch := range []int{3, 1} {
		vals := m.Pix
		if ch == 1 {
			vals = grey
		}
		f, err := os.Open(filepath.Join(dir, fmt.Sprintf("cv%d.pfm", ch)))
		if err != nil {
			t.Fatal(err)
		}
		got, info, err := DecodePFMInfo(f)
		f.Close()
		if err != nil {
			t.Fatal(err)
		}
		if info.Channels != ch || !info.LittleEndian {
			t.Errorf("OpenCV PFM header: %+v", info)
		}
		for i, v := range vals {
			var g float32
			if ch == 3 {
				g = got.Pix[i]
			} else {
				g = got.Pix[3*i]
			}
			if g != v {
				t.Fatalf("channels %d: sample %d: Patina read %v from OpenCV's file, want %v", ch, i, g, v)
			}
		}
	}
}
