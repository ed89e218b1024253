package metrics_test

import (
	"fmt"

	"patina/fit/metrics"
)

// A render 5 % too bright against a photo of a mid-grey card, judged
// against the FADGI 4 star level. By hand: the linear error 0.009 gives
// 10 log10(1 / 0.009^2) = 40.92 dB; sRGB encodes 0.18 and 0.189 to 0.46137
// and 0.47195 (about 39.5 dB; the float32 inputs move the last digit);
// L* is 49.496 and 50.570, so dE00 = dL* = 1.074 (S_L = 1 at L* = 50);
// SSIM of two flat fields is
// 1 - (0.46137 - 0.47195)^2 / (0.46137^2 + 0.47195^2 + 0.01^2) = 0.9997.
func ExampleCompare() {
	const w, h = 32, 24
	photo := make([]float32, 3*w*h)
	render := make([]float32, 3*w*h)
	for i := range photo {
		photo[i] = 0.18
		render[i] = 0.18 * 1.05
	}
	res, _, err := metrics.Compare(render, photo, w, h, nil, nil, nil, metrics.Options{Peak: 1, NoImages: true})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("pixels %d, PSNR linear %.2f dB, sRGB %.2f dB, SSIM %.4f\n", res.Pixels, res.PSNRLinear, res.PSNRSRGB, res.SSIM)
	fmt.Printf("dE00 mean %.3f, p95 %.3f\n", res.DE2000Mean, res.DE2000P95)
	fmt.Println(metrics.FADGI4Star.Verdict(res))
	// Output:
	// pixels 768, PSNR linear 40.92 dB, sRGB 39.49 dB, SSIM 0.9997
	// dE00 mean 1.074, p95 1.074
	// PASS against fadgi-4star: mean dE00 1.07 < 2 (FADGI, Technical Guidelines for Digitizing Cultural Heritage Materials (2023), 4 star: mean Delta E 2000 < 2)
}
