// Package fit turns a capture's calibrated photographs into per-segment
// reflectance parameters (brdf.Params) with uncertainties and diagnostics,
// and writes them as a materials file.
//
// # The job
//
// Run does the whole job on a capture: BuildObservations reads the fitting
// photos one at a time (the next one is decoded while the current one is
// used, so at most two are in memory), casts a ray through every pixel of
// each camera once for all of that camera's photos, rejects the pixels that
// cannot be trusted and counts them by reason (Rejections; a saturated pixel
// is kept, its clipped channels as lower bounds, unless
// Options.RejectSaturated), draws a
// stratified sample of at most Options.Samples pixels per segment and photo,
// casts shadow rays to the photo's lights, and stores each kept pixel as an
// observation in the segment's local shading frame (Observations, float32,
// structure of arrays). Fit then solves the radiometric scale from the
// segments with a reference albedo (Scale), fits every segment (FitSegment)
// and evaluates the residual of every photo (PhotoResidual).
//
// # The model and the loss
//
// The forward model is the direct lighting of the capture's lights, with the
// renderer's light definitions: radiance = sum over the photo's unoccluded
// lights of f(wo, wi) * E, where f is brdf.Eval and E the irradiance the
// light delivers (intensity / r^2 times the cosine of incidence for a point
// light, irradiance times that cosine for a directional one; a sphere light
// counts as a point light of the same intensity at its centre, exact in the
// far field). Interreflection is modelled to one bounce (indirect.go):
// cosine-weighted rays from every observation find the direct light the
// rest of the mesh reflects onto it, the neighbours' fitted BRDFs turn that
// into indirect light between fitting stages (pooled over neighbouring
// observations of the same photo), and the model adds its reflection by
// the observed surface (as a matte response for a dielectric, as
// directional light samples for a metal). Options.IndirectSamples < 0
// turns the term off.
//
// The loss is Charbonnier on the log-radiance residual; the objective's doc
// comment says why. A clipped channel is a censored observation (Tobit):
// its likelihood of lying at or above the clip level enters through its
// deviance residual, with the noise scale measured near the clip level
// between stages (SegmentFit.ClipScale). Gradients are analytic (brdf.EvalGrad), evaluated on all
// threads over fixed chunks with an ordered reduction, so the result is the
// same bit for bit on any number of cores, and nothing is allocated per pass.
//
// # Optimisation
//
// The optimisers work on an unconstrained vector theta mapped to the natural
// parameters by logistic functions (colours in [0,1], roughness in
// [MinRoughness, 1]). Levenberg-Marquardt on the Gauss-Newton model of the
// robust loss (IRLS weights, Marquardt's diagonal scaling) is the default:
// on the recovery cases it converges in about 20 passes where L-BFGS (gonum
// optimize) needs about 50 and Adam about 190 (BenchmarkOptimizers); both
// stay selectable. Each accepted step's curvature is corrected along the
// step by the secant condition (runLM), which stops the zig-zag of plain
// Gauss-Newton along a shallow valley. The diffuse colour starts
// from linear least squares on the observations far from the specular
// configuration, F0 from linear least squares at each of a few roughness
// starts; the best start after a short run is continued. Stop rules: relative
// loss change, gradient norm, a pass limit; Options.Progress reports every
// pass and a cancelled context stops within one pass.
//
// # Uncertainty and diagnostics
//
// Sigma is the larger of the Gauss-Newton standard deviation (scaled by the
// residual variance and by the design effect of the residuals' correlation
// within a photo) and the photo-clustered sandwich one, with the
// sensitivity to the indirect-light estimate added in quadrature, in the
// parameters' natural units (see SegmentFit.uncertainty and
// metalIndirectSigma for the formulas and sources). A parameter held by
// Options.Locks keeps its value exactly and has sigma 0; LossHistory
// records the loss of every pass. Warnings say, in plain words with advice, when specular colour
// and roughness rest on too few near-specular observations, when a
// parameter's sigma exceeds Options.MaxRelativeSigma of its value, when a
// calibration target disagrees with its reference albedo and when one photo
// disagrees with the others (a wrong exposure or light).
//
// # For the workbench
//
// Run takes a context (cancel: Run returns ctx.Err()) and reports through
// Options.Progress, called on the fitting goroutine: Stage, an overall
// Fraction in [0,1], the photo count while reading, and per pass the
// segment, pass number, loss and current Params (for a live loss curve).
// Hand each value to the GUI thread; the callback must return quickly.
package fit
