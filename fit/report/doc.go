// Package report proves a materials file against the photographs its fit
// never saw: it renders the view of every holdout photo of a capture under
// that photo's lights with the fitted materials, compares the render with the
// photo (patina/fit/metrics: PSNR, SSIM, CIEDE2000, error maps), judges the
// result against a published colour-accuracy tolerance, and writes the
// outcome as one self-contained HTML page and a JSON record with the same
// facts.
//
// # The comparison
//
// The render uses the photo's camera (intrinsics, distortion, pose) at the
// photo's size, the photo's lights only, no environment, and the path tracer
// with direct and indirect light up to Options.MaxDepth scattering events.
// Its radiance is multiplied by the materials file's radiometric scale, the
// factor the fit solved between the capture's light units and the photos'
// radiance (photo radiance = scale x predicted radiance, fit.Scale); the
// photo is decoded with its own encoding, levels and exposure
// (capture.LoadPhoto). So both images are on the radiometric scale the fit
// worked in.
//
// The pixels compared are those where the ray through the pixel centre hits
// the mesh, the photo is not saturated and the photo's mask (if any) keeps
// the pixel. Each pixel belongs to the capture segment of the triangle hit.
//
// # Samples per pixel
//
// The render must be less noisy than the photo, or the comparison measures
// the renderer's noise. The rule (Options.SPP = 0):
//
//  1. Estimate the photo's own noise sigma_p (linear radiance, the capture's
//     scale) over the compared pixels with Immerkaer's operator
//     (PhotoNoise): the 3x3 kernel [1 -2 1; -2 4 -2; 1 -2 1] cancels any
//     locally linear shading, leaving noise with standard deviation
//     6 sigma; the median absolute response over the pixels whose whole
//     3x3 neighbourhood is compared, divided by 6 x 0.6745, gives sigma_p
//     robustly (edges and texture are a minority of pixels).
//  2. Render a pilot of PilotSPP samples per pixel and take the median over
//     the compared pixels of the per-sample variance s^2 of the render
//     (Film.Variance times the pilot's sample count, mean of the channels,
//     times the radiometric scale squared).
//  3. Choose N = ceil(s^2 / (r sigma_p)^2) with r = Options.NoiseRatio
//     (default 0.5): the render's standard error is then at most half the
//     photo's noise on the typical pixel, so it adds at most about 12 % to
//     the noise of the difference (sqrt(1 + 0.25) = 1.118). N is kept within
//     [MinSPP, Options.MaxSPP]; when the cap binds the report says that the
//     rule was not met and by how much.
//
// The final render's measured noise (median standard error over the compared
// pixels) is reported beside sigma_p for every holdout photo.
package report
