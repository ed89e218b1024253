// Package app is Patina's desktop workbench, built with Fyne
// (fyne.io/fyne/v2). It drives the packages below it (assets, render, fit)
// and holds no numerical method of its own beyond what a display needs:
// tone mapping through render.ToneMap, projecting the mesh through a photo's
// calibrated camera for an overlay, and resampling images for the screen.
//
// The state of a working session (the open capture, the materials, the
// selections and settings) lives in one Session value whose methods are
// tested without a window. The views (Capture, Photos, Materials, Fit,
// Relight, Compare) are thin: they call Session methods and show what the
// session reports.
//
// Threading follows Fyne 2.6 and later: every widget is touched on the UI
// goroutine. Long work (loading, thumbnails, the fit, renders, comparisons)
// runs in a goroutine with its own context, reports through a coalescing
// poster so that a fast worker queues at most one delivery at a time, and is
// cancelled when it is replaced, when its view asks, or when the window
// closes.
package app
