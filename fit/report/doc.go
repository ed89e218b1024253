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
//  2. Render a pilot: PilotSPP (64) samples of at most PilotPixels (4096)
//     of the same pixels, every k-th in row order so that they spread over
//     the view, gathered into a compact film. Take the median over them of
//     the per-sample variance s^2 (Film.Variance times the samples, mean of
//     the channels, times the radiometric scale squared) and the wanted
//     count N = ceil(s^2 / (r sigma_p)^2) with r = Options.NoiseRatio
//     (default 0.5).
//  3. Render every pixel that can see the mesh with N samples, but at
//     least Options.MinSPP (default MinSPP, 16) and at most Options.MaxSPP
//     (default 64, to keep a report to minutes), in which case the report
//     says that the rule was not met and by how much. The typical pixel's
//     standard error is then at most r times the photo's noise; with r = 0.5
//     it adds about 12 % to the noise of the difference (sqrt(1 + 0.25) =
//     1.118).
//
// The median, like the photo's estimate, so that both describe the typical
// pixel. The pilot takes many samples of few pixels because the samples of
// indirect light are heavy-tailed: with few samples most pixels have not yet
// met a rare bright path and their spread looks too small. Measured on the
// small demo capture's four views, the median per-sample variance from 16
// samples was 1.5 to 6 times lower than from 64, and from 256 it was another
// 1.4 to 1.7 times higher: the estimate from 64 still errs low, and the
// floor of 16 samples keeps views whose estimate is small from being
// rendered with a handful. The rare bright paths themselves ("fireflies")
// are not held to the rule; their share shows in the root-mean-square noise
// the report gives beside the median, and as isolated pixels in the maps.
//
// Because every sample depends only on (seed, pixel, sample index), a
// pixel's value does not depend on which other pixels are rendered: pixels
// more than one pixel away from any mesh hit are not traced (without an
// environment they show nothing of the object; a lamp seen directly there
// stays black) and the rest are exactly those of a full render.
//
// # Pictures
//
// Views wider than Options.PanelWidth (default 400 pixels) are drawn reduced
// by the smallest whole factor that fits (4 for the full demo's 1280x960):
// each picture pixel is the mean linear value of a block for the photo and
// the simulation, and the mean Delta E 2000 and dL* of the block's compared
// pixels for the maps, as their legends say. The metrics use every pixel.
// This keeps the page, which holds every picture, light enough to mail; for
// the same reason the Delta E 2000 map appears once, as the strip's right
// panel with its legend, and the lightness map follows on its own.
//
// The rule's estimate of the render's noise (median standard error over the
// compared pixels, from the pilot) is reported beside sigma_p for every
// holdout photo; with a fixed Options.SPP, the render's own.
package report
