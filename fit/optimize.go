package fit

import (
	"context"
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/optimize"

	"patina/brdf"
)

// Optimizer names a minimisation method of the fit.
type Optimizer string

const (
	// LBFGS is gonum's limited-memory BFGS with a strong-Wolfe line search:
	// on this smooth, low-dimensional problem it reaches the optimum in far
	// fewer passes than Adam (see BenchmarkOptimizers), so it is the default.
	LBFGS Optimizer = "lbfgs"
	// Adam (Kingma and Ba, "Adam: a method for stochastic optimization",
	// ICLR 2015) on the full batch, with its step halved on a plateau: the
	// robust baseline, insensitive to scaling and to a rough start.
	Adam Optimizer = "adam"
	// LM is Levenberg-Marquardt (Marquardt, J. SIAM 11(2), 1963) on the
	// Gauss-Newton model of the robust loss with its IRLS weights: each
	// pass evaluates loss, gradient and the weighted J^T W J together, and
	// the damped Newton step is solved in theta with the diagonal of that
	// matrix as the scaling, so parameters of very different sensitivity
	// (a diffuse colour and a roughness) take well-proportioned steps.
	LM Optimizer = "lm"
)

// ParseOptimizer checks an optimiser name ("" gives the default).
func ParseOptimizer(s string) (Optimizer, error) {
	switch Optimizer(s) {
	case "":
		return LM, nil
	case LBFGS, Adam, LM:
		return Optimizer(s), nil
	}
	return "", fmt.Errorf("fit: unknown optimizer %q (expected %q, %q or %q)", s, LM, LBFGS, Adam)
}

// bounds maps the unconstrained vector theta the optimisers work on to the
// model's natural parameters p = lo + (hi - lo) * logistic(theta), so every
// step lands inside the valid range (colours in [0,1], roughness in
// [MinRoughness, 1]) and no optimiser needs constraints.
type bounds struct {
	n      int
	lo, hi [brdf.MaxParams]float64
	// hold, when not nil, fixes some entries at their locked values: natural
	// writes those values whatever theta says and chain zeroes their
	// gradient, so no optimiser moves them.
	hold *held
}

func newBounds(kind brdf.Kind, minRough float64) bounds {
	b := bounds{n: kind.NumParams()}
	for k := 0; k < b.n; k++ {
		b.lo[k], b.hi[k] = 0, 1
	}
	b.lo[b.n-1] = minRough // roughness is last for every kind
	return b
}

func logistic(t float64) float64 {
	if t >= 0 {
		return 1 / (1 + math.Exp(-t))
	}
	e := math.Exp(t)
	return e / (1 + e)
}

// natural writes p(theta) into v.
func (b *bounds) natural(theta, v []float64) {
	for k := 0; k < b.n; k++ {
		v[k] = b.lo[k] + (b.hi[k]-b.lo[k])*logistic(theta[k])
	}
	b.hold.apply(v[:b.n])
}

// theta writes theta(p) into t, clamping p just inside the open range.
func (b *bounds) theta(v, t []float64) {
	for k := 0; k < b.n; k++ {
		u := (v[k] - b.lo[k]) / (b.hi[k] - b.lo[k])
		u = math.Min(math.Max(u, 1e-6), 1-1e-6)
		t[k] = math.Log(u / (1 - u))
	}
}

// chain turns a gradient with respect to p into one with respect to theta.
func (b *bounds) chain(theta, gp, gt []float64) {
	for k := 0; k < b.n; k++ {
		s := logistic(theta[k])
		gt[k] = gp[k] * (b.hi[k] - b.lo[k]) * s * (1 - s)
		if b.hold != nil && b.hold.fixed[k] {
			gt[k] = 0
		}
	}
}

// thetaProblem is the objective as a function of theta, caching the last
// point so that a method asking for value and gradient at the same point
// separately pays one pass.
type thetaProblem struct {
	obj    *objective
	b      bounds
	params brdf.Params
	v, gp  [brdf.MaxParams]float64
	lastX  [brdf.MaxParams]float64
	lastF  float64
	lastG  [brdf.MaxParams]float64
	valid  bool
	onPass func(theta []float64, loss float64) error
	err    error
	// history is the loss of every pass, in order.
	history []float64
}

func (tp *thetaProblem) evalBoth(theta []float64) (float64, []float64) {
	n := tp.b.n
	if tp.valid && equal(theta, tp.lastX[:n]) {
		return tp.lastF, tp.lastG[:n]
	}
	tp.b.natural(theta, tp.v[:n])
	if err := tp.params.FromVector(tp.v[:n]); err != nil {
		panic("fit: internal: " + err.Error()) // the vector length is the kind's own
	}
	f := tp.obj.eval(&tp.params, tp.gp[:n])
	tp.b.chain(theta, tp.gp[:n], tp.lastG[:n])
	copy(tp.lastX[:n], theta)
	tp.lastF = f
	tp.valid = true
	tp.history = append(tp.history, f)
	if tp.onPass != nil && tp.err == nil {
		tp.err = tp.onPass(theta, f)
	}
	return f, tp.lastG[:n]
}

func equal(a, b []float64) bool {
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// stopRules says when an optimisation ends.
type stopRules struct {
	maxPasses int     // passes over the observations
	relTol    float64 // relative loss decrease below which a pass does not count as progress
	absTol    float64 // absolute loss decrease below which a pass does not count as progress
	gradTol   float64 // infinity norm of the gradient in theta
	patience  int     // passes without progress before stopping
}

// Stop reasons.
const (
	stopConverged = "loss converged"
	stopGradient  = "gradient below tolerance"
	stopPasses    = "pass limit reached"
	stopStalled   = "no further progress"
)

var errPassLimit = errors.New("fit: pass limit")

// minimize runs one optimiser from theta (updated in place to the best point
// found) and returns the best loss, the stop reason and passes used.
func minimize(ctx context.Context, method Optimizer, tp *thetaProblem, theta []float64, rules stopRules) (float64, string, int, error) {
	start := tp.obj.passes
	var loss float64
	var reason string
	var err error
	switch method {
	case Adam:
		loss, reason, err = runAdam(ctx, tp, theta, rules)
	case LM:
		loss, reason, err = runLM(ctx, tp, theta, rules)
	default:
		loss, reason, err = runLBFGS(ctx, tp, theta, rules)
	}
	return loss, reason, tp.obj.passes - start, err
}

func runAdam(ctx context.Context, tp *thetaProblem, theta []float64, rules stopRules) (float64, string, error) {
	n := len(theta)
	const beta1, beta2, epsA = 0.9, 0.999, 1e-12
	lr := 0.1
	var m, v, best [brdf.MaxParams]float64
	bestF := math.Inf(1)
	copy(best[:n], theta)
	progressF := math.Inf(1) // loss at the last counted progress
	sinceProgress, sinceBest := 0, 0
	for pass := 1; ; pass++ {
		if err := ctx.Err(); err != nil {
			copy(theta, best[:n])
			return bestF, "", err
		}
		f, g := tp.evalBoth(theta)
		if tp.err != nil {
			copy(theta, best[:n])
			return bestF, "", tp.err
		}
		if f < bestF {
			bestF = f
			copy(best[:n], theta)
			sinceBest = 0
		} else {
			sinceBest++
		}
		if progressF-f > rules.relTol*math.Abs(f)+rules.absTol {
			progressF = f
			sinceProgress = 0
		} else {
			sinceProgress++
		}
		gn := 0.0
		for _, x := range g {
			gn = math.Max(gn, math.Abs(x))
		}
		switch {
		case gn < rules.gradTol:
			copy(theta, best[:n])
			return bestF, stopGradient, nil
		case sinceProgress >= 4*rules.patience:
			// Adam's loss is not monotone, so it gets more patience
			// than a line-search method.
			copy(theta, best[:n])
			return bestF, stopConverged, nil
		case pass >= rules.maxPasses:
			copy(theta, best[:n])
			return bestF, stopPasses, nil
		}
		// A full-batch gradient is exact, so Adam's oscillation around the
		// optimum is the step size's: halve it when the loss stops falling,
		// restarting from the best point.
		if sinceBest >= 3 {
			lr *= 0.5
			copy(theta, best[:n])
			m, v = [brdf.MaxParams]float64{}, [brdf.MaxParams]float64{}
			sinceBest = 0
			if lr < 1e-6 {
				return bestF, stopConverged, nil
			}
			continue
		}
		b1 := 1 - math.Pow(beta1, float64(pass))
		b2 := 1 - math.Pow(beta2, float64(pass))
		for k := 0; k < n; k++ {
			m[k] = beta1*m[k] + (1-beta1)*g[k]
			v[k] = beta2*v[k] + (1-beta2)*g[k]*g[k]
			theta[k] -= lr * (m[k] / b1) / (math.Sqrt(v[k]/b2) + epsA)
		}
	}
}

// passRecorder stops gonum's minimiser on cancel or at the pass limit.
type passRecorder struct {
	ctx   context.Context
	tp    *thetaProblem
	limit int
	start int
}

func (r *passRecorder) Init() error { return nil }
func (r *passRecorder) Record(_ *optimize.Location, _ optimize.Operation, _ *optimize.Stats) error {
	if err := r.ctx.Err(); err != nil {
		return err
	}
	if r.tp.err != nil {
		return r.tp.err
	}
	if r.tp.obj.passes-r.start >= r.limit {
		return errPassLimit
	}
	return nil
}

func runLBFGS(ctx context.Context, tp *thetaProblem, theta []float64, rules stopRules) (float64, string, error) {
	n := len(theta)
	var best [brdf.MaxParams]float64
	bestF := math.Inf(1)
	copy(best[:n], theta)
	keep := func(x []float64, f float64) {
		if f < bestF {
			bestF = f
			copy(best[:n], x)
		}
	}
	prob := optimize.Problem{
		Func: func(x []float64) float64 {
			f, _ := tp.evalBoth(x)
			keep(x, f)
			return f
		},
		Grad: func(grad, x []float64) {
			f, g := tp.evalBoth(x)
			keep(x, f)
			copy(grad, g)
		},
	}
	settings := &optimize.Settings{
		GradientThreshold: rules.gradTol,
		Converger: &optimize.FunctionConverge{
			Relative: rules.relTol, Absolute: rules.absTol, Iterations: rules.patience,
		},
		Recorder: &passRecorder{ctx: ctx, tp: tp, limit: rules.maxPasses, start: tp.obj.passes},
	}
	res, err := optimize.Minimize(prob, theta, settings, &optimize.LBFGS{GradStopThreshold: math.NaN()})
	copy(theta, best[:n])
	switch {
	case errors.Is(err, errPassLimit):
		return bestF, stopPasses, nil
	case ctx.Err() != nil:
		return bestF, "", ctx.Err()
	case tp.err != nil:
		return bestF, "", tp.err
	case err != nil && res == nil:
		return bestF, "", fmt.Errorf("fit: L-BFGS: %w", err)
	}
	switch res.Status {
	case optimize.GradientThreshold:
		return bestF, stopGradient, nil
	case optimize.FunctionConvergence:
		return bestF, stopConverged, nil
	}
	// A line search that cannot improve further (as happens at an optimum
	// reached to machine precision) ends here.
	return bestF, stopStalled, nil
}

// evalHess evaluates loss, gradient and the Gauss-Newton matrix in theta
// (one pass): with D = dp/dtheta (diagonal, 0 for a held entry),
// g_theta = D g_p and H_theta = D H_p D. hess receives n*n entries.
func (tp *thetaProblem) evalHess(theta, hess []float64) (float64, []float64) {
	n := tp.b.n
	tp.b.natural(theta, tp.v[:n])
	if err := tp.params.FromVector(tp.v[:n]); err != nil {
		panic("fit: internal: " + err.Error())
	}
	var hp [brdf.MaxParams * brdf.MaxParams]float64
	f := tp.obj.evalHess(&tp.params, tp.gp[:n], hp[:n*n])
	tp.b.chain(theta, tp.gp[:n], tp.lastG[:n])
	var one, d [brdf.MaxParams]float64
	for k := 0; k < n; k++ {
		one[k] = 1
	}
	tp.b.chain(theta, one[:n], d[:n])
	for a := 0; a < n; a++ {
		for b := 0; b < n; b++ {
			hess[a*n+b] = d[a] * hp[a*n+b] * d[b]
		}
	}
	copy(tp.lastX[:n], theta)
	tp.lastF = f
	tp.valid = true
	tp.history = append(tp.history, f)
	if tp.onPass != nil && tp.err == nil {
		tp.err = tp.onPass(theta, f)
	}
	return f, tp.lastG[:n]
}

// solveDamped solves (H + lambda diag(H)) x = -g for n <= brdf.MaxParams by
// Cholesky, without allocating. A zero diagonal (a held parameter) gets a
// unit one so its step is 0. It reports false when the matrix is not
// positive definite.
func solveDamped(n int, h, g []float64, lambda float64, x []float64) bool {
	var a [brdf.MaxParams * brdf.MaxParams]float64
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			a[i*n+j] = h[i*n+j]
		}
		dg := h[i*n+i]
		if !(dg > 0) {
			for j := 0; j < n; j++ {
				a[i*n+j], a[j*n+i] = 0, 0
			}
			dg = 1
		}
		a[i*n+i] = dg * (1 + lambda)
	}
	// In-place Cholesky a = L L^T (lower triangle).
	for j := 0; j < n; j++ {
		s := a[j*n+j]
		for k := 0; k < j; k++ {
			s -= a[j*n+k] * a[j*n+k]
		}
		if !(s > 0) {
			return false
		}
		a[j*n+j] = math.Sqrt(s)
		for i := j + 1; i < n; i++ {
			t := a[i*n+j]
			for k := 0; k < j; k++ {
				t -= a[i*n+k] * a[j*n+k]
			}
			a[i*n+j] = t / a[j*n+j]
		}
	}
	var y [brdf.MaxParams]float64
	for i := 0; i < n; i++ {
		t := -g[i]
		for k := 0; k < i; k++ {
			t -= a[i*n+k] * y[k]
		}
		y[i] = t / a[i*n+i]
	}
	for i := n - 1; i >= 0; i-- {
		t := y[i]
		for k := i + 1; k < n; k++ {
			t -= a[k*n+i] * x[k]
		}
		x[i] = t / a[i*n+i]
	}
	return true
}

// runLM is Levenberg-Marquardt with Marquardt's diagonal scaling: a step
// that lowers the loss is taken and the damping divided by 3, one that
// does not is refused (its pass still counts) and the damping multiplied
// by 4 (Nielsen's rules, "Damping parameter in Marquardt's method", IMM
// DTU report, 1999, in their simplest form). Every pass evaluates the
// trial point's loss, gradient and Gauss-Newton matrix together, so an
// accepted step needs no further evaluation.
//
// The Gauss-Newton matrix leaves out the residuals' own curvature, which
// is not small here (log residuals of a few percent to tens of percent,
// a robust loss): along a shallow valley (a rough dielectric's F0 against
// its roughness) the steps then overshoot and the iterates zig-zag to the
// optimum, losing a factor of about 0.9 per pass. So after an accepted
// step s, with y the change of the gradient along it, the matrix of the
// new point gets a rank-one term (y.s - s'Hs) (Hs)(Hs)' / (s'Hs)^2 when
// y.s > s'Hs: the curvature along s then equals the measured one (the
// secant condition s'H's = s'y), and the matrix stays positive definite.
// This is the secant augmentation of Gauss-Newton for large-residual
// problems (Dennis and Schnabel, "Numerical Methods for Unconstrained
// Optimization and Nonlinear Equations", 1983, section 10.3), here in its
// simplest, memoryless form along the last step.
func runLM(ctx context.Context, tp *thetaProblem, theta []float64, rules stopRules) (float64, string, error) {
	n := len(theta)
	start := tp.obj.passes
	var h, ht [brdf.MaxParams * brdf.MaxParams]float64
	var g, step, trial [brdf.MaxParams]float64
	if err := ctx.Err(); err != nil {
		return math.Inf(1), "", err
	}
	f, gr := tp.evalHess(theta, h[:n*n])
	copy(g[:n], gr)
	if tp.err != nil {
		return f, "", tp.err
	}
	lambda := 1e-3
	since := 0
	for {
		gn := 0.0
		for _, x := range g[:n] {
			gn = math.Max(gn, math.Abs(x))
		}
		switch {
		case gn < rules.gradTol:
			return f, stopGradient, nil
		case since >= rules.patience:
			return f, stopConverged, nil
		case tp.obj.passes-start >= rules.maxPasses:
			return f, stopPasses, nil
		case lambda > 1e12:
			return f, stopStalled, nil
		}
		if err := ctx.Err(); err != nil {
			return f, "", err
		}
		if !solveDamped(n, h[:n*n], g[:n], lambda, step[:n]) {
			lambda *= 4
			since++
			continue
		}
		// The decrease the Gauss-Newton model predicts for the step: when
		// even that is below the tolerance the fit has converged, whether
		// or not the step is taken; a refused step that promised more
		// only needs more damping, and is not counted against patience.
		pred := 0.0
		for a := 0; a < n; a++ {
			hs := 0.0
			for b := 0; b < n; b++ {
				hs += h[a*n+b] * step[b]
			}
			pred -= g[a]*step[a] + 0.5*step[a]*hs
		}
		tiny := pred <= rules.relTol*math.Abs(f)+rules.absTol
		for k := 0; k < n; k++ {
			trial[k] = theta[k] + step[k]
		}
		ft, gt := tp.evalHess(trial[:n], ht[:n*n])
		if tp.err != nil {
			return f, "", tp.err
		}
		if ft < f {
			if f-ft > rules.relTol*math.Abs(ft)+rules.absTol {
				since = 0
			} else {
				since++
			}
			// Secant correction of the curvature along the step taken
			// (see runLM's comment).
			var hs [brdf.MaxParams]float64
			sy, shs := 0.0, 0.0
			for a := 0; a < n; a++ {
				sy += step[a] * (gt[a] - g[a])
				for b := 0; b < n; b++ {
					hs[a] += ht[a*n+b] * step[b]
				}
				shs += step[a] * hs[a]
			}
			f = ft
			copy(theta, trial[:n])
			copy(g[:n], gt)
			h = ht
			if shs > 0 && sy > shs && !math.IsInf(sy, 0) {
				c := (sy - shs) / (shs * shs)
				for a := 0; a < n; a++ {
					for b := 0; b < n; b++ {
						h[a*n+b] += c * hs[a] * hs[b]
					}
				}
			}
			lambda = math.Max(lambda/3, 1e-12)
		} else {
			lambda *= 4
			if tiny {
				since++
			}
		}
	}
}
