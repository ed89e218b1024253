// Package metrics compares a rendered image with a photograph of the same
// view: PSNR on linear radiance and on sRGB-encoded values, SSIM (Wang,
// Bovik, Sheikh and Simoncelli, "Image quality assessment: from error
// visibility to structural similarity", IEEE TIP 13(4), 2004), and the
// CIEDE2000 colour difference (CIE 142-2001; Sharma, Wu and Dalal, Color
// Res. Appl. 30(1), 2005) per pixel in CIELAB (D65, 2 degree observer), over
// the pixels where the comparison is meaningful and per surface segment. It
// also draws the error maps (maps.go) and judges a result against published
// colour-accuracy tolerances (tolerance.go).
//
// # Inputs
//
// Both images are linear RGB with sRGB/Rec. 709 primaries and D65 white, as
// float32 triples in row-major order, aligned pixel for pixel, on the same
// radiometric scale (the photo decoded with its exposure, the render with
// the fit's scale). valid marks the pixels to compare: the object is
// visible, the photo is not saturated, and the pixel is inside the photo's
// mask. segment gives each pixel's segment index (negative: none).
//
// # Documented choices
//
// Peak. One linear value, Options.Peak, fixes the scale of every metric: it
// is the peak of the linear PSNR, it maps to 1.0 before sRGB encoding (so the
// sRGB PSNR and SSIM see the image exposed with Peak as white, values above
// clipped), and it is the CIELAB reference white (Y = Peak gives L* = 100).
// By default it is the 99.9th percentile of max(R, G, B) over the photo's
// valid pixels, so that an isolated specular highlight does not set the
// scale and at most 0.1 % of the compared pixels clip in the sRGB metrics.
// Result.Peak reports the value used.
//
// PSNR. 10 log10(peak^2 / MSE) with the MSE over the valid pixels and all
// three channels: on the linear values divided by Peak (peak 1), and on the
// sRGB-encoded values of those clipped to [0, 1] (IEC 61966-2-1, peak 1).
// Identical images give +Inf (null in JSON).
//
// SSIM. On one channel, the sRGB-encoded relative luminance: Y from the
// linear values (the middle row of the IEC 61966-2-1 RGB to XYZ matrix),
// divided by Peak, clipped to [0, 1], then encoded with the sRGB curve;
// dynamic range L = 1, C1 = (0.01 L)^2, C2 = (0.03 L)^2, an 11 x 11 Gaussian
// window with sigma 1.5 normalised to sum 1, population (not sample)
// covariances, as in Wang et al. 2004. Masking rule: the local means,
// variances and covariance at a pixel are weighted over the valid pixels of
// its window only (window weights times the validity mask, renormalised to
// sum 1), so that background and saturated pixels never enter the
// statistics; pixels outside the image count as invalid. The SSIM of an
// image or a segment is the mean of the SSIM map over its valid pixels.
// Where the whole window is valid this is exactly the published index. With
// Options.SSIMExcludeBorder the mean also leaves out the pixels closer than
// (11 - 1) / 2 = 5 to the image edge, which is what scikit-image's
// structural_similarity does; with all pixels valid the result then equals
// scikit-image's (gaussian_weights=True, sigma=1.5,
// use_sample_covariance=False, data_range=1).
//
// Delta E 2000. CIELAB of the linear values divided by Peak (not clipped),
// CIEDE2000 with kL = kC = kH = 1 per valid pixel. The mean is over the
// float64 values; median, 95th percentile and maximum are order statistics
// of the float32 map, with numpy's default ("linear") interpolation between
// ranks.
//
// sRGB encoding for the metrics goes through a table of the IEC curve with
// linear interpolation, within 2e-9 of colour.LinearToSRGB.
//
// # Maps
//
// Maps.DeltaEImage shows Delta E 2000 in a sequential scale from dark
// blue-violet (0) through magenta and orange to pale yellow (Options.
// DeltaEScale, default 10, and above); Maps.DeltaLImage shows the lightness
// difference L*(render) - L*(photo) in a diverging scale from blue
// (simulation darker) through near-white (no difference) to brown-orange
// (simulation lighter), default range +-10. Both scales are Patina's own:
// smooth paths through CIELAB with monotonic lightness, sampled at equal
// Delta E 2000 steps (tests hold the steps to 1 %). The scales are fixed, not
// stretched to each image, so that maps of different views compare at a
// glance. Pixels not compared are hatched in neutral grey. Each picture has
// a legend with its numbers, the statistics and a note on reading it;
// Maps.Strip puts photo, simulation (labelled "simulation") and the Delta E
// map side by side above the Delta E legend.
//
// Computation is split into fixed bands of rows whose partial sums are added
// in band order, so results are the same bytes for any number of threads.
package metrics
