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
//  2. Render a pilot: PilotReplicates (8) independent renders of PilotSPP
//     (8) samples each of at most PilotPixels (4096) of the same pixels,
//     every k-th in row order so that they spread over the view, gathered
//     into a compact film (each copy at other film coordinates, so with
//     other scrambling seeds). The spread of a pixel's eight means after n
//     samples, n in PilotCounts (4 and 8, passes of the pilot), is its
//     error variance V_j(n) at n samples (mean of the channels, times the
//     radiometric scale squared). Take s^2(n) = median(V_j(n)) n, divided
//     by the median of a chi-square variable with 7 degrees of freedom
//     over 7 (0.908, Wilson and Hilferty's approximation), and the wanted
//     count N, the smallest with s^2(n) / N <= (r sigma_p)^2, n the largest
//     pilot count at most N and r = Options.NoiseRatio (default 0.5).
//  3. Render every pixel that can see the mesh with N samples, but at
//     least Options.MinSPP (default MinSPP, 16) and at most Options.MaxSPP
//     (default 64, to keep a report to minutes), in which case the report
//     says that the rule was not met and by how much. The typical pixel's
//     standard error is then about r times the photo's noise; with r = 0.5
//     it adds about 12 % to the noise of the difference (sqrt(1 + 0.25) =
//     1.118).
//  4. Unless Options.Uniform, N is each pixel's most rather than its
//     count (render.Adaptive): between the renderer's passes, once a pixel
//     has Options.PixelMinSPP samples or more (default 4), it stops when
//     its own per-sample variance over its samples (or the mean of its
//     3x3 neighbourhood's, if larger) is below (r sigma_p)^2. Quiet pixels
//     (direct light on a matte surface) stop early, the noisy ones
//     (indirect light) get all N.
//
// The render noise the report gives is measured by the pilot, not by the
// render: the median over the pilot's pixels of V_j(n) n / n_j, n_j the
// samples pixel j got and n the largest pilot count at most n_j, with the
// same chi-square correction, and the root mean square without it. The
// pilot's replicates measure the error the renderer's sampler really
// makes. A film's own variance estimate treats a pixel's samples as
// independent, but the scrambled Sobol points are stratified: on the small
// demo capture's four views the replicates' spread at 16 samples was 0.35
// to 0.47 of that estimate, at 32 samples 0.29 to 0.38. The error falls
// faster than 1/N, so extrapolating it by 1/N from the pilot's counts errs
// on the noisy side, and PixelMinSPP is the smallest count so that no
// pixel is extrapolated downwards. With adaptive stopping, pixels whose
// noise estimate came out low stop a little early, and the typical pixel's
// measured ratio can end slightly above r (0.55 against 0.5 on the small
// demo's views whose count the rule set; 0.3 to 0.4 on those at the floor
// of 16); the report gives the measured ratio beside the target.
//
// The median, like the photo's estimate, so that both describe the typical
// pixel. The pilot takes many samples of few pixels because the samples of
// indirect light are heavy-tailed: with few samples most pixels have not yet
// met a rare bright path and their spread looks too small. The floor of 16
// samples keeps views whose estimate is small from being rendered with a
// handful. The rare bright paths themselves ("fireflies") are not held to
// the rule; their share shows in the root-mean-square noise the report gives
// beside the median, and as isolated pixels in the maps.
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
// pilot's pixels) is reported beside sigma_p for every holdout photo; with a
// fixed Options.SPP, the render's own (its film's variance estimate, which
// overstates the error of the stratified samples).
package report
