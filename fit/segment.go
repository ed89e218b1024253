package fit

import (
	"context"
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"

	"patina/brdf"
)

// SegmentFit is the outcome of fitting one segment.
type SegmentFit struct {
	Name string
	Kind brdf.Kind
	// Params are the fitted parameters.
	Params brdf.Params
	// Sigma holds one standard deviation of each parameter in its natural
	// units, laid out like Params (a dielectric's single F0 sigma is in all
	// three Specular channels; a metal's Diffuse is zero). +Inf marks a
	// parameter the observations do not determine at all.
	Sigma brdf.Params
	// Covariance is the Gauss-Newton covariance of the parameter vector
	// (brdf's Vector order), row-major, NumParams x NumParams.
	Covariance []float64
	// PhotoInflation is the largest ratio, over the parameters, of the
	// photo-clustered standard deviation to the Gauss-Newton one (see
	// uncertainty); above 1 the residuals are correlated within photos
	// (calibration or model error) and Sigma was widened accordingly.
	PhotoInflation float64
	// DesignEffect is the largest variance inflation of the Gauss-Newton
	// covariance, over the parameters, for the correlation of the
	// residuals within a photo (1: independent pixels; see uncertainty).
	DesignEffect float64
	// IndirectSigma is the part of each parameter's sigma (vector order) due
	// to the uncertainty of the indirect-light estimate, before it is added
	// in quadrature.
	IndirectSigma [brdf.MaxParams]float64
	// Observations is the number of observations fitted; NearSpecular how
	// many of them have a half vector within Options.NearSpecularDegrees of
	// the normal for at least one light.
	Observations int
	NearSpecular int
	// RMSE is the root mean square of the radiance residual (photo minus
	// model, linear, capture radiance units) over all observations and
	// channels at the optimum.
	RMSE float64
	// RMSLog is the root mean square of the log-radiance residual, about
	// the relative error: 0.05 means the model is off by about 5% on a
	// typical pixel.
	RMSLog float64
	// Loss is the robust loss at the optimum.
	Loss float64
	// Censored is the number of observations with a clipped channel
	// (Observations.Censored), NearSpecularCensored how many of the
	// near-specular ones have one.
	Censored, NearSpecularCensored int
	// ClipScale is the robust spread (1.4826 times the median absolute
	// deviation) of the log residuals of the unclipped channels that lie
	// within a factor of two below their photo's clip level: the noise of
	// the observations most like the clipped ones, which Run uses as the
	// next stage's Observations.ClipSigma. 0 when there are fewer than
	// minClipScaleResiduals of them.
	ClipScale float64
	// Passes counts the optimisers' evaluations of the loss over all the
	// observations (with its gradient, and for LM its Gauss-Newton matrix),
	// the short runs from every roughness start and refused LM steps
	// included, over all the fitting stages of Run. Not counted: the one
	// evaluation per fit that computes the uncertainty, and the passes of
	// a metal's sensitivity refit (SigmaPasses).
	Passes int
	// SigmaPasses are the passes of a metal's sensitivity refit for its
	// sigma (metalIndirectSigma), not counted in Passes.
	SigmaPasses int
	// LossHistory is the loss evaluated at every pass, in order (its length
	// is Passes): the short runs from each roughness start come first, then
	// the continued best start (so the curve restarts at each start), and a
	// calibration target refitted at a corrected scale continues with the
	// passes of the refit. Line searches try points that raise the loss, so
	// the curve is not monotone; its running minimum is the best loss found.
	LossHistory []float64
	// Locked names the parameters held at given values (Options.Locks),
	// sorted; their Sigma is 0.
	Locked []string
	// Stop says why the optimiser stopped.
	Stop string
	// StartRoughness is the roughness start that led to the optimum.
	StartRoughness float64
	// Fitted is false when there were too few observations to fit at all.
	Fitted bool
	// Warnings are plain-language diagnostics with advice.
	Warnings []string
}

// FitSegment fits one segment's observations with a model kind. It is the
// core of Run, usable on observations from any source. Having no segment
// name, it takes its lock from opts.Locks[""].
func FitSegment(ctx context.Context, obs *Observations, kind brdf.Kind, opts Options) (*SegmentFit, error) {
	opts = opts.withDefaults()
	eps := opts.NoiseFloor
	if eps <= 0 {
		eps = 1e-4
	}
	var hold *held
	if l, ok := opts.Locks[""]; ok {
		var err error
		if hold, err = resolveLock("", kind, &l, opts.MinRoughness); err != nil {
			return nil, err
		}
	}
	return fitSegment(ctx, obs, kind, "", 0, 1, eps, "", nil, hold, opts)
}

// neutralParams are the values an unfitted segment gets: a mid-grey
// dielectric with glTF's default F0 0.04, or a bright grey metal.
func neutralParams(kind brdf.Kind) brdf.Params {
	if kind == brdf.Metal {
		return brdf.Params{Kind: kind, Specular: brdf.RGB{0.9, 0.9, 0.9}, Roughness: 0.5}
	}
	return brdf.Params{Kind: kind, Diffuse: brdf.RGB{0.5, 0.5, 0.5}, Specular: brdf.RGB{0.04, 0.04, 0.04}, Roughness: 0.5}
}

// genericAdvice is said when nothing is known about the segment's geometry.
const genericAdvice = "add photos in which a light sits near the mirror direction of a camera about this segment's surface, so its highlights are seen"

// fitSegment fits obs; warm, when not nil, is the single starting point
// (no roughness starts), used when refitting after a small change.
// hold, when not nil, fixes the locked entries.
func fitSegment(ctx context.Context, obs *Observations, kind brdf.Kind, name string, index, count int, eps float64, advice string, warm *brdf.Params, hold *held, opts Options) (*SegmentFit, error) {
	np := kind.NumParams()
	res := &SegmentFit{Name: name, Kind: kind, Observations: obs.Len()}
	res.Params.Kind, res.Sigma.Kind = kind, kind
	if hold.any() {
		res.Locked = append([]string(nil), hold.names...)
	}
	if advice == "" {
		advice = genericAdvice
	}
	cosNear := opts.nearSpecularCos()
	for i := 0; i < obs.Len(); i++ {
		c := obs.censored(i) != 0
		if c {
			res.Censored++
		}
		if obs.halfCos(i) >= cosNear {
			res.NearSpecular++
			if c {
				res.NearSpecularCensored++
			}
		}
	}
	if obs.Len() < 4*np {
		// Neutral values, so a renderer still draws something plausible;
		// Fitted stays false and the sigma is unknown.
		res.Params = neutralParams(kind)
		hold.applyParams(&res.Params)
		for k := range res.Sigma.Specular {
			res.Sigma.Specular[k] = math.Inf(1)
			if kind != brdf.Metal {
				res.Sigma.Diffuse[k] = math.Inf(1)
			}
		}
		res.Sigma.Roughness = math.Inf(1)
		if hold.any() {
			var z [brdf.MaxParams]float64
			res.Sigma.Vector(z[:0])
			for k := 0; k < np; k++ {
				if hold.fixed[k] {
					z[k] = 0
				}
			}
			res.Sigma = sigmaParams(kind, z[:np])
		}
		res.Warnings = append(res.Warnings, fmt.Sprintf(
			"only %d observations for %d parameters: not fitted; photograph this segment from more cameras or under more lights, and check its mask and that its segment label matches the mesh", obs.Len(), np))
		return res, nil
	}

	obj := newObjective(obs, kind, eps, opts.Delta, opts.Threads)
	defer obj.close()
	tp := &thetaProblem{obj: obj, b: newBounds(kind, opts.MinRoughness)}
	tp.b.hold = hold
	tp.params.Kind = kind
	tp.history = make([]float64, 0, opts.MaxPasses+8)
	if opts.Progress != nil {
		tp.onPass = func(theta []float64, loss float64) error {
			var v [brdf.MaxParams]float64
			tp.b.natural(theta, v[:np])
			pr := Progress{Stage: StageFit, Segment: index, Segments: count, SegmentName: name,
				Pass: obj.passes, Loss: loss}
			pr.Params.Kind = kind
			_ = pr.Params.FromVector(v[:np])
			opts.Progress(pr)
			return nil
		}
	}
	rules := stopRules{maxPasses: opts.StartPasses, relTol: opts.RelTol, absTol: opts.AbsTol,
		gradTol: opts.GradTol, patience: opts.Patience}

	var starts []brdf.Params
	if warm != nil {
		starts = []brdf.Params{*warm}
		rules.maxPasses = 0
	} else {
		starts = initialGuesses(obs, kind, hold, opts)
	}
	var bestTheta [brdf.MaxParams]float64
	bestLoss := math.Inf(1)
	for _, st := range starts {
		if warm != nil {
			var v [brdf.MaxParams]float64
			st.Vector(v[:0])
			tp.b.theta(v[:np], bestTheta[:np])
			res.StartRoughness = st.Roughness
			break
		}
		var v, theta [brdf.MaxParams]float64
		st.Vector(v[:0])
		tp.b.theta(v[:np], theta[:np])
		loss, _, _, err := minimize(ctx, opts.Optimizer, tp, theta[:np], rules)
		if err != nil {
			return nil, err
		}
		if loss < bestLoss {
			bestLoss = loss
			bestTheta = theta
			res.StartRoughness = st.Roughness
		}
	}
	rules.maxPasses = max(opts.MaxPasses-obj.passes, 1)
	loss, reason, _, err := minimize(ctx, opts.Optimizer, tp, bestTheta[:np], rules)
	if err != nil {
		return nil, err
	}
	res.Loss, res.Stop, res.Passes = loss, reason, obj.passes
	res.LossHistory = tp.history
	var v [brdf.MaxParams]float64
	tp.b.natural(bestTheta[:np], v[:np])
	if err := res.Params.FromVector(v[:np]); err != nil {
		return nil, err
	}
	res.Fitted = true
	res.uncertainty(obs, eps, opts.Delta, hold)
	res.warn(opts, advice)
	return res, nil
}

// initialGuesses returns one starting point per roughness start. Diffuse
// colour comes from linear least squares on the observations far from the
// specular configuration, where the model is nearly Lambertian:
// o_c = d_c/pi * sum_l E_lc. The specular colour for each start then comes
// from linear least squares on all observations, because with Schlick's
// approximation the model is affine in F0 at fixed roughness and diffuse:
// m = A F0 + B, with B = model(F0 = 0) and A = model(F0 = 1) - B.
//
// Held parameters take their locked values before the linear solves (so a
// held diffuse colour informs the F0 start), and a held roughness leaves a
// single start.
func initialGuesses(obs *Observations, kind brdf.Kind, hold *held, opts Options) []brdf.Params {
	n := obs.Len()
	hasDiffuse := kind != brdf.Metal
	var diffuse brdf.RGB
	if hasDiffuse {
		cos := make([]float64, n)
		for i := range cos {
			cos[i] = obs.halfCos(i)
		}
		sorted := append([]float64(nil), cos...)
		sort.Float64s(sorted)
		// Far from specular: half vector more than 20 degrees from the
		// normal, or the half of the observations farthest from it.
		limit := math.Max(math.Cos(20*math.Pi/180), sorted[n/2])
		var num, den [3]float64
		for i := 0; i < n; i++ {
			if cos[i] > limit {
				continue
			}
			o := [3]float64{float64(obs.R[i]), float64(obs.G[i]), float64(obs.B[i])}
			s, e := obs.lights(i)
			var a [3]float64
			for l := s; l < e; l++ {
				a[0] += float64(obs.ER[l]) / math.Pi
				a[1] += float64(obs.EG[l]) / math.Pi
				a[2] += float64(obs.EB[l]) / math.Pi
			}
			if len(obs.AR) == n {
				a[0] += float64(obs.AR[i]) / math.Pi
				a[1] += float64(obs.AG[i]) / math.Pi
				a[2] += float64(obs.AB[i]) / math.Pi
			}
			cm := obs.censored(i)
			for c := 0; c < 3; c++ {
				if cm&(1<<c) != 0 {
					continue // a lower bound, not a value
				}
				num[c] += o[c] * a[c]
				den[c] += a[c] * a[c]
			}
		}
		for c := 0; c < 3; c++ {
			d := 0.5
			if den[c] > 0 {
				d = num[c] / den[c] / 0.96 // (1 - F) with F near 0.04 away from the highlight
			}
			diffuse[c] = clamp(d, 0.005, 0.98)
		}
	}
	var out []brdf.Params
	rstarts := opts.RoughnessStarts
	if hold != nil && hold.fixed[kind.NumParams()-1] {
		rstarts = []float64{hold.value[kind.NumParams()-1]}
	}
	for _, r0 := range rstarts {
		r0 = clamp(r0, opts.MinRoughness, 1)
		p0 := brdf.Params{Kind: kind, Diffuse: diffuse, Roughness: r0}
		hold.applyParams(&p0)
		p1 := p0
		p1.Specular = brdf.RGB{1, 1, 1}
		var num, den [3]float64
		for i := 0; i < n; i++ {
			wo := brdf.Vec{X: float64(obs.WoX[i]), Y: float64(obs.WoY[i]), Z: float64(obs.WoZ[i])}
			s, e := obs.lights(i)
			var a, b [3]float64
			for l := s; l < e; l++ {
				wi := brdf.Vec{X: float64(obs.WiX[l]), Y: float64(obs.WiY[l]), Z: float64(obs.WiZ[l])}
				ir := [3]float64{float64(obs.ER[l]), float64(obs.EG[l]), float64(obs.EB[l])}
				f0 := brdf.Eval(&p0, wo, wi)
				f1 := brdf.Eval(&p1, wo, wi)
				for c := 0; c < 3; c++ {
					b[c] += f0[c] * ir[c]
					a[c] += (f1[c] - f0[c]) * ir[c]
				}
			}
			if len(obs.AR) == n {
				r0, r1 := ambientResponseMatte(&p0, nil, obs.matteMetal), ambientResponseMatte(&p1, nil, obs.matteMetal)
				amb := [3]float64{float64(obs.AR[i]), float64(obs.AG[i]), float64(obs.AB[i])}
				for c := 0; c < 3; c++ {
					b[c] += r0[c] * amb[c]
					a[c] += (r1[c] - r0[c]) * amb[c]
				}
			}
			o := [3]float64{float64(obs.R[i]), float64(obs.G[i]), float64(obs.B[i])}
			cm := obs.censored(i)
			for c := 0; c < 3; c++ {
				if cm&(1<<c) != 0 {
					continue
				}
				num[c] += a[c] * (o[c] - b[c])
				den[c] += a[c] * a[c]
			}
		}
		p := p0
		switch kind {
		case brdf.Dielectric:
			f := 0.04
			if d := den[0] + den[1] + den[2]; d > 0 {
				f = (num[0] + num[1] + num[2]) / d
			}
			f = clamp(f, 0.01, 0.5)
			p.Specular = brdf.RGB{f, f, f}
		default:
			for c := 0; c < 3; c++ {
				f := 0.04
				if den[c] > 0 {
					f = num[c] / den[c]
				}
				p.Specular[c] = clamp(f, 0.01, 0.98)
			}
		}
		hold.applyParams(&p)
		out = append(out, p)
	}
	return out
}

func clamp(x, lo, hi float64) float64 {
	if math.IsNaN(x) {
		return lo
	}
	return math.Min(math.Max(x, lo), hi)
}

// uncertainty fills Sigma, Covariance, RMSE and RMSLog. The covariance is
// the Gauss-Newton approximation at the optimum. With residuals r_j, their
// Jacobian J with respect to the natural parameters and the robust loss's
// iteratively-reweighted-least-squares weights w_j = psi(r_j)/r_j
// (= 1/sqrt(1 + (r/delta)^2) for Charbonnier),
//
//	Cov = s^2 (J^T W J)^-1,   s^2 = sum w_j r_j^2 / (n - p),
//
// the classical nonlinear least-squares estimate (Seber and Wild,
// "Nonlinear Regression", 1989, section 2.1), scaled by the residual
// variance so that it describes the noise actually seen.
//
// That estimate assumes independent residuals. In a real capture the
// largest errors are shared by all pixels of a photo (a lamp a few
// millimetres off, an exposure slightly wrong, interreflection under one
// light), and then it is far too confident. So the photo-clustered
// ("sandwich") covariance is computed as well,
//
//	Cov_cl = H^-1 (G/(G-1) sum over photos g_p g_p^T) H^-1,
//	H = J^T W J,  g_p = sum over the photo's residuals of w_j r_j J_j
//
// (Liang and Zeger, Biometrika 73(1), 1986; the G/(G-1) small-sample
// factor is common practice), and each reported sigma is the larger of
// the two standard deviations. With independent noise both agree.
//
// Held (locked) parameters are not estimated: their rows and columns are
// left out (H gets a unit diagonal there, which decouples them exactly)
// and their sigma is 0.
func (res *SegmentFit) uncertainty(obs *Observations, eps, delta float64, hold *held) {
	np := res.Kind.NumParams()
	h := make([]float64, np*np)
	var bg brdf.Grad
	p := &res.Params
	sumW2, sumR2, sumLin2 := 0.0, 0.0, 0.0
	nres := 0
	scores := map[int32]*[brdf.MaxParams]float64{}
	// Per photo: count, sum and sum of squares of the log residuals, for
	// the intra-photo correlation.
	// and of every parameter's weighted Jacobian entry (the regression's
	// covariates), for the design effect of each parameter.
	type group struct {
		n, sum, sum2 float64
		xs, xs2      [brdf.MaxParams]float64
	}
	groups := map[int32]*group{}
	// u is the sensitivity of the weighted normal equations to a relative
	// change of the indirect term (see below).
	var u [brdf.MaxParams]float64
	ambient := len(obs.AR) == obs.Len() && obs.Len() > 0
	var dR [3][brdf.MaxParams]float64
	resp := ambientResponse(p, &dR)
	// uResp is the response whose error the systematic term below measures
	// (a metal's, 0, is handled by metalIndirectSigma).
	uResp, uFactor := resp, IndirectRelError
	clipS := obs.clipSigma()
	// The clip level of every photo with a clipped channel, for ClipScale.
	clipOf := map[int32]float64{}
	for i, cm := range obs.Censored {
		for c := 0; c < 3; c++ {
			if cm&(1<<c) != 0 {
				clipOf[obs.Photo[i]] = float64([]float32{obs.R[i], obs.G[i], obs.B[i]}[c])
			}
		}
	}
	var nearClip []float64
	for i := 0; i < obs.Len(); i++ {
		wo := brdf.Vec{X: float64(obs.WoX[i]), Y: float64(obs.WoY[i]), Z: float64(obs.WoZ[i])}
		s, e := obs.lights(i)
		var m [3]float64
		var dm [3][brdf.MaxParams]float64
		var mAmb [3]float64
		for l := s; l < e; l++ {
			wi := brdf.Vec{X: float64(obs.WiX[l]), Y: float64(obs.WiY[l]), Z: float64(obs.WiZ[l])}
			ir := [3]float64{float64(obs.ER[l]), float64(obs.EG[l]), float64(obs.EB[l])}
			f := brdf.EvalGrad(p, wo, wi, &bg)
			ind := obs.indirectSample(l)
			for c := 0; c < 3; c++ {
				m[c] += f[c] * ir[c]
				if ind {
					mAmb[c] += f[c] * ir[c] // the directional indirect term
				}
				for k := 0; k < np; k++ {
					dm[c][k] += bg[c][k] * ir[c]
				}
			}
		}
		if ambient {
			a := [3]float64{float64(obs.AR[i]), float64(obs.AG[i]), float64(obs.AB[i])}
			for c := 0; c < 3; c++ {
				mAmb[c] += uResp[c] * a[c]
				m[c] += resp[c] * a[c]
				for k := 0; k < np; k++ {
					dm[c][k] += dR[c][k] * a[c]
				}
			}
		}
		gr := groups[obs.Photo[i]]
		if gr == nil {
			gr = &group{}
			groups[obs.Photo[i]] = gr
		}
		g := scores[obs.Photo[i]]
		if g == nil {
			g = new([brdf.MaxParams]float64)
			scores[obs.Photo[i]] = g
		}
		o := [3]float64{float64(obs.R[i]), float64(obs.G[i]), float64(obs.B[i])}
		cm := obs.censored(i)
		for c := 0; c < 3; c++ {
			me := m[c] + eps
			r := math.Log(me) - math.Log(math.Max(o[c], 0)+eps)
			if cm&(1<<c) != 0 {
				// A clipped channel (objective): its score and
				// Gauss-Newton weight enter H, the photo scores and the
				// indirect sensitivity; it has no residual for the
				// variance, the design effect or the RMS figures.
				_, dl, gw := censoredTerm(r, clipS, delta)
				da := mAmb[c] / me
				for a := 0; a < np; a++ {
					ja := dm[c][a] / me
					g[a] += dl * ja
					u[a] += gw * ja * da
					for b := 0; b <= a; b++ {
						h[a*np+b] += gw * ja * dm[c][b] / me
					}
				}
				continue
			}
			if l, ok := clipOf[obs.Photo[i]]; ok && o[c] >= l/2 {
				nearClip = append(nearClip, r)
			}
			q := r / delta
			w := 1 / math.Sqrt(1+q*q)
			sumW2 += w * r * r
			sumR2 += r * r
			gr.n++
			gr.sum += r
			gr.sum2 += r * r
			sw := math.Sqrt(w)
			for a := 0; a < np; a++ {
				x := sw * dm[c][a] / me
				gr.xs[a] += x
				gr.xs2[a] += x * x
			}
			sumLin2 += (o[c] - m[c]) * (o[c] - m[c])
			nres++
			da := mAmb[c] / me // d r / d alpha for the indirect term scaled by (1 + alpha)
			for a := 0; a < np; a++ {
				ja := dm[c][a] / me
				g[a] += w * r * ja
				u[a] += w * ja * da
				for b := 0; b <= a; b++ {
					h[a*np+b] += w * ja * dm[c][b] / me
				}
			}
		}
	}
	for a := 0; a < np; a++ {
		for b := 0; b < a; b++ {
			h[b*np+a] = h[a*np+b]
		}
	}
	if hold.any() {
		for a := 0; a < np; a++ {
			if !hold.fixed[a] {
				continue
			}
			for b := 0; b < np; b++ {
				h[a*np+b], h[b*np+a] = 0, 0
			}
			h[a*np+a] = 1
			for _, g := range scores {
				g[a] = 0
			}
		}
	}
	if len(nearClip) >= minClipScaleResiduals {
		med := median(nearClip)
		for k, r := range nearClip {
			nearClip[k] = math.Abs(r - med)
		}
		res.ClipScale = 1.4826 * median(nearClip) // consistent with a normal sigma (common practice)
	}
	res.RMSLog = math.Sqrt(sumR2 / float64(max(nres, 1)))
	res.RMSE = math.Sqrt(sumLin2 / float64(max(nres, 1)))
	s2 := sumW2 / float64(max(nres-np, 1))
	sigma := make([]float64, np)
	res.Covariance = make([]float64, np*np)
	var chol mat.Cholesky
	var inv mat.SymDense
	ok := chol.Factorize(mat.NewSymDense(np, h))
	if ok {
		ok = chol.InverseTo(&inv) == nil
	}
	if !ok {
		for a := range sigma {
			sigma[a] = math.Inf(1)
		}
		for a := range res.Covariance {
			res.Covariance[a] = math.Inf(1)
		}
		res.PhotoInflation = math.NaN()
		res.Sigma = sigmaParams(res.Kind, sigma)
		return
	}
	// Pixels of one photo are not independent: a calibration error of the
	// photo's light or exposure, or a model error under that light, is
	// shared by all of them. The intra-photo correlation rho of the
	// residuals (one-way analysis of variance, the intraclass correlation)
	// gives the design effect deff = 1 + (m - 1) rho, m the mean number of
	// residuals per photo (Kish, "Survey Sampling", 1965, section 5.4): the
	// variance of a mean of correlated observations is deff times the
	// independent one, so n / deff is the effective sample size.
	//
	// For a regression coefficient the inflation is smaller when its
	// covariate varies within the photos: deff_k = 1 + (m - 1) rho_e rho_k,
	// rho_e the residuals' and rho_k the covariate's (the weighted Jacobian
	// column's) intraclass correlation (Scott and Holt, "The effect of
	// two-stage sampling on ordinary least squares methods", JASA 77, 1982).
	keys := make([]int, 0, len(groups))
	for k := range groups {
		keys = append(keys, int(k))
	}
	sort.Ints(keys)
	ge := make([]groupStat, 0, len(keys))
	for _, k := range keys {
		g := groups[int32(k)]
		ge = append(ge, groupStat{g.n, g.sum, g.sum2})
	}
	rhoE, mbar := intraclass(ge)
	res.DesignEffect = 1
	deff := make([]float64, np)
	for a := 0; a < np; a++ {
		gx := make([]groupStat, 0, len(keys))
		for _, k := range keys {
			g := groups[int32(k)]
			gx = append(gx, groupStat{g.n, g.xs[a], g.xs2[a]})
		}
		rhoX, _ := intraclass(gx)
		deff[a] = 1 + math.Max(mbar-1, 0)*rhoE*rhoX
		res.DesignEffect = math.Max(res.DesignEffect, deff[a])
	}
	for a := 0; a < np; a++ {
		for b := 0; b < np; b++ {
			res.Covariance[a*np+b] = s2 * math.Sqrt(deff[a]*deff[b]) * inv.At(a, b)
		}
		sigma[a] = math.Sqrt(math.Max(res.Covariance[a*np+a], 0))
	}
	res.PhotoInflation = 1
	if G := len(scores); G >= 2 {
		// Photos in index order, so the sums do not depend on map order.
		keys := make([]int, 0, G)
		for k := range scores {
			keys = append(keys, int(k))
		}
		sort.Ints(keys)
		meat := mat.NewSymDense(np, nil)
		for _, k := range keys {
			g := scores[int32(k)]
			for a := 0; a < np; a++ {
				for b := 0; b <= a; b++ {
					meat.SetSym(a, b, meat.At(a, b)+g[a]*g[b])
				}
			}
		}
		var t1, cl mat.Dense
		t1.Mul(&inv, meat)
		cl.Mul(&t1, &inv)
		f := float64(G) / float64(G-1)
		for a := 0; a < np; a++ {
			sc := math.Sqrt(math.Max(f*cl.At(a, a), 0))
			if sigma[a] > 0 {
				res.PhotoInflation = math.Max(res.PhotoInflation, sc/sigma[a])
			}
			sigma[a] = math.Max(sigma[a], sc)
		}
	}
	// The indirect term is an estimate (indirect.go: one bounce, matte
	// neighbours, a few rays per observation). A relative error alpha of it
	// moves the optimum by dp = -H^-1 u alpha to first order (the implicit
	// function theorem on the weighted normal equations, u = sum w J dr/dalpha);
	// that systematic part is added in quadrature with IndirectRelError as
	// alpha, the documented uncertainty of the estimate.
	if ambient || len(obs.LightRay) > 0 {
		for a := 0; a < np; a++ {
			dp := 0.0
			for b := 0; b < np; b++ {
				dp += inv.At(a, b) * u[b]
			}
			sys := uFactor * math.Abs(dp)
			res.IndirectSigma[a] = sys
			sigma[a] = math.Hypot(sigma[a], sys)
		}
	}
	if hold.any() {
		for a := 0; a < np; a++ {
			if hold.fixed[a] {
				sigma[a] = 0
				for b := 0; b < np; b++ {
					res.Covariance[a*np+b], res.Covariance[b*np+a] = 0, 0
				}
			}
		}
	}
	res.Sigma = sigmaParams(res.Kind, sigma)
}

// paramNames names the entries of a kind's vector for messages.
func paramNames(kind brdf.Kind) []string {
	switch kind {
	case brdf.Dielectric:
		return []string{"diffuse red", "diffuse green", "diffuse blue", "specular F0", "roughness"}
	case brdf.Metal:
		return []string{"specular red", "specular green", "specular blue", "roughness"}
	}
	return []string{"diffuse red", "diffuse green", "diffuse blue", "specular red", "specular green", "specular blue", "roughness"}
}

// warn adds the identifiability warnings.
func (res *SegmentFit) warn(opts Options, advice string) {
	np := res.Kind.NumParams()
	var v, s [brdf.MaxParams]float64
	res.Params.Vector(v[:0])
	res.Sigma.Vector(s[:0])
	names := paramNames(res.Kind)
	if open := res.NearSpecular - res.NearSpecularCensored; open < opts.MinNearSpecular {
		if res.NearSpecularCensored > 0 {
			res.Warnings = append(res.Warnings, fmt.Sprintf(
				"specular colour and roughness are not identifiable from the highlights: only %d near-specular observations are unclipped (need %d); %d more are clipped, known only as lower bounds, so F0 and roughness rest on the flanks of the lobe; photos of the highlights at a shorter exposure would measure them",
				open, opts.MinNearSpecular, res.NearSpecularCensored))
		} else {
			res.Warnings = append(res.Warnings, fmt.Sprintf(
				"specular colour and roughness are not identifiable: only %d near-specular observations (need %d); %s",
				res.NearSpecular, opts.MinNearSpecular, advice))
		}
	}
	var loose []string
	for k := 0; k < np; k++ {
		ref := math.Max(math.Abs(v[k]), 0.05)
		if !(s[k] <= opts.MaxRelativeSigma*ref) {
			loose = append(loose, fmt.Sprintf("%s %.3g ± %.2g", names[k], v[k], s[k]))
		}
	}
	if len(loose) > 0 {
		what := advice
		if res.Kind != brdf.Metal && allDiffuse(loose) {
			what = "add photos under lights from more directions, away from the highlights"
		}
		res.Warnings = append(res.Warnings, fmt.Sprintf(
			"poorly constrained (one sigma above %.0f%% of the value): %s; %s",
			100*opts.MaxRelativeSigma, joinList(loose), what))
	}
	var atBound []string
	for k := 0; k < np; k++ {
		lo := 0.0
		if k == np-1 {
			lo = opts.MinRoughness
		}
		if v[k] > 1-1e-3 || (k == np-1 && v[k] < lo+1e-3) {
			atBound = append(atBound, fmt.Sprintf("%s %.3g", names[k], v[k]))
		}
	}
	if len(atBound) > 0 {
		res.Warnings = append(res.Warnings, fmt.Sprintf(
			"at the limit of the valid range: %s; the model cannot explain these photos well; look for light reflected onto the segment by bright or concave surroundings, a wrong light intensity, or pixels of another material in this segment",
			joinList(atBound)))
	}
	if res.Stop == stopPasses {
		res.Warnings = append(res.Warnings, fmt.Sprintf(
			"the optimiser stopped at the pass limit (%d) before converging; raise the limit or check the observations", opts.MaxPasses))
	}
}

func allDiffuse(items []string) bool {
	for _, s := range items {
		if len(s) < 7 || s[:7] != "diffuse" {
			return false
		}
	}
	return true
}

func joinList(items []string) string {
	out := ""
	for i, s := range items {
		if i > 0 {
			out += ", "
		}
		out += s
	}
	return out
}

// minClipScaleResiduals is the fewest residuals near the clip level from
// which SegmentFit.ClipScale is estimated.
const minClipScaleResiduals = 30

// IndirectRelError is the relative uncertainty assigned to the estimated
// indirect light: the one-bounce estimate leaves out later bounces (their
// share is about the neighbours' albedo, 0.2 to 0.5 of the first bounce on
// typical objects) and treats every neighbour as matte, so it is taken to
// be good to about a third (a judgement, documented here, not a measured
// figure).
const IndirectRelError = 0.33

// MetalIndirectFactor turns the parameter shift of a metal's sensitivity
// refit (metalIndirectSigma) into a standard deviation: the reflected
// indirect light the model leaves out lies somewhere between none and
// about the matte-lobe estimate, and for a value spread evenly over [0, M]
// the root-mean-square error of taking 0 is M / sqrt(3).
var MetalIndirectFactor = 1 / math.Sqrt(3)

type groupStat struct{ n, sum, sum2 float64 }

// designEffect returns 1 + (m - 1) rho for values in groups (the design
// effect of their mean; Kish, "Survey Sampling", 1965), m the mean group
// size and rho their intraclass correlation (intraclass). Fewer than two
// groups give 1.
func designEffect(gs []groupStat) float64 {
	rho, m := intraclass(gs)
	return 1 + math.Max(m-1, 0)*rho
}

// intraclass returns the intraclass correlation of values in groups from
// the one-way analysis of variance (rho = (MSB - MSW) / (MSB + (m0 - 1)
// MSW), m0 the adjusted mean group size; Snedecor and Cochran,
// "Statistical Methods", 8th ed., 1989, section 13.11), clamped to [0, 1],
// and the mean group size. Fewer than two groups give 0.
func intraclass(gs []groupStat) (rho, mean float64) {
	k := len(gs)
	if k < 2 {
		return 0, 0
	}
	var N, S, S2, sumN2 float64
	for _, g := range gs {
		N += g.n
		S += g.sum
		S2 += g.sum2
		sumN2 += g.n * g.n
	}
	if N <= float64(k) {
		return 0, N / float64(k)
	}
	mu := S / N
	ssb := 0.0
	for _, g := range gs {
		if g.n > 0 {
			d := g.sum/g.n - mu
			ssb += g.n * d * d
		}
	}
	ssw := S2 - S*S/N - ssb
	msb := ssb / float64(k-1)
	msw := math.Max(ssw, 0) / (N - float64(k))
	m0 := (N - sumN2/N) / float64(k-1)
	den := msb + (m0-1)*msw
	if !(den > 0) {
		return 0, N / float64(k)
	}
	return math.Min(math.Max((msb-msw)/den, 0), 1), N / float64(k)
}
