package metrics

import (
	"encoding/binary"
	"math"
	"testing"
)

// FuzzCompare feeds arbitrary sizes, values, masks and segment maps: Compare
// must return a result or an error, never panic, and a result must hold
// finite Delta E statistics.
func FuzzCompare(f *testing.F) {
	f.Add(uint8(4), uint8(3), []byte{1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15, 16}, uint8(0))
	f.Add(uint8(11), uint8(12), []byte{0xff, 0xff, 0x7f, 0x7f, 0, 0, 0x80, 0x7f, 1, 0, 0, 0}, uint8(3))
	f.Add(uint8(1), uint8(1), []byte{0, 0, 0xc0, 0x7f}, uint8(1))
	f.Fuzz(func(t *testing.T, w8, h8 uint8, data []byte, mode uint8) {
		w, h := int(w8%40), int(h8%40)
		n := w * h
		word := func(k int) uint32 {
			if len(data) < 4 {
				return uint32(k * 2654435761)
			}
			o := (4 * k) % (len(data) - len(data)%4 + 4)
			if o+4 > len(data) {
				o = 0
			}
			return binary.LittleEndian.Uint32(data[o:])
		}
		render := make([]float32, 3*n)
		photo := make([]float32, 3*n)
		for i := range render {
			render[i] = math.Float32frombits(word(2 * i))
			photo[i] = math.Float32frombits(word(2*i + 1))
			if mode&1 == 0 { // mostly plausible values
				render[i] = float32(word(2*i)%1000) / 700
				photo[i] = float32(word(2*i+1)%1000) / 700
			}
		}
		var valid []bool
		var seg []int32
		if mode&2 != 0 {
			valid = make([]bool, n)
			seg = make([]int32, n)
			for i := range valid {
				valid[i] = word(i)&1 == 0
				seg[i] = int32(word(i)>>8)%5 - 1
			}
		}
		opt := Options{Threads: int(mode>>4) % 4, SSIMExcludeBorder: mode&4 != 0, NoImages: mode&8 == 0}
		res, maps, err := Compare(render, photo, w, h, valid, seg, nil, opt)
		if err != nil {
			return
		}
		for _, v := range []float64{res.DE2000Mean, res.DE2000Median, res.DE2000P95, res.DE2000Max} {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				t.Fatalf("non-finite Delta E statistic in %+v", res)
			}
		}
		// PSNR is +Inf for identical pixels, never NaN; SSIM is NaN only
		// when every pixel lies in the excluded border.
		if math.IsNaN(res.PSNRLinear) || math.IsNaN(res.PSNRSRGB) || math.IsInf(res.SSIM, 0) ||
			(math.IsNaN(res.SSIM) && !opt.SSIMExcludeBorder) {
			t.Fatalf("undefined PSNR or SSIM in %+v", res)
		}
		if len(maps.DeltaE) != n {
			t.Fatalf("map has %d entries, want %d", len(maps.DeltaE), n)
		}
	})
}
