package fit

import (
	"math"
	"sync"
	"sync/atomic"

	"patina/brdf"
)

var sqrt = math.Sqrt

// chunkSize is the fixed number of observations per work item. Partial sums
// are kept per chunk and added in chunk order, so the objective is bit for
// bit the same whatever the number of threads (floating-point addition is
// not associative; a reduction in scheduling order would not be).
const chunkSize = 2048

// objective is the robust photometric loss of one segment:
//
//	L(p) = 1/(3N) * sum over observations i and channels c of rho(r_ic)
//	r_ic = log(m_ic(p) + eps) - log(max(o_ic, 0) + eps)
//	m_ic = sum over light samples l of f_c(p, wo_i, wi_l) * E_lc
//	rho(r) = delta^2 (sqrt(1 + (r/delta)^2) - 1)        (Charbonnier)
//
// Why a log residual: the observations of one segment span two or three
// orders of magnitude between the diffuse body and a specular highlight, and
// photographic noise and calibration error (exposure, light intensity) are
// roughly proportional to the signal. An absolute residual would let the few
// brightest pixels decide everything; the log residual weighs every pixel by
// its relative error, and eps (the noise floor) keeps dark pixels, whose
// relative error is noise, from dominating. Why Charbonnier: it is quadratic
// for |r| << delta (the least-squares estimate when the model is right),
// grows only linearly beyond (a clipped highlight the mask missed, a
// registration error, a shadow edge cost a bounded pull), and unlike Huber it
// is smooth everywhere, which quasi-Newton line searches prefer.
//
// A clipped channel (Observations.Censored: the pixel reached the photo's
// saturation level, stored as the clip level L) is a censored observation:
// the true radiance is at least L. Leaving such pixels out would bias the
// fit low, since near a highlight only the pixels whose noise happened to
// be negative stay below the clip (and the brightest part of the lobe would
// be lost altogether). It enters as in censored regression (the Tobit model:
// Tobin, "Estimation of relationships for limited dependent variables",
// Econometrica 26(1), 1958; Amemiya, "Tobit models: a survey", J.
// Econometrics 24, 1984): with log-normal noise of scale s on the
// observation, the likelihood of "at least L" is Phi(r/s), r = log(m + eps)
// - log(L + eps), and its negative log n(r) = -log Phi(r/s) is near 0 when
// the model is well above the clip and grows like (r/s)^2/2 below it. The
// loss takes it through its deviance residual u = s sqrt(2 n(r))
// (McCullagh and Nelder, "Generalized Linear Models", 2nd ed., 1989,
// section 2.4.3), u = |r| for an ordinary Gaussian observation, and applies
// the same Charbonnier: rho(u). Near the clip that is s^2 n(r), the Tobit
// log-likelihood on the same footing as the unclipped channels' r^2/2; far
// below it the pull is bounded like theirs. Its derivative is
// d rho / d r = -s lambda(r/s) / sqrt(1 + (u/delta)^2), with lambda =
// phi/Phi the inverse Mills ratio, and its Gauss-Newton weight
// lambda^2 / (2 n) / sqrt(1 + (u/delta)^2).
type objective struct {
	obs   *Observations
	kind  brdf.Kind
	np    int
	eps   float64
	delta float64
	// clipSigma is the censored channels' scale (Observations.ClipSigma).
	clipSigma float64
	invO      [3][]float32 // 1/(max(o,0)+eps), precomputed

	nchunks  int
	partLoss []float64
	partGrad [][brdf.MaxParams]float64
	partHess [][brdf.MaxParams * brdf.MaxParams]float64

	// The pass being evaluated, read by the workers.
	params   brdf.Params
	wantGrad bool
	wantHess bool
	next     atomic.Int64

	threads int
	start   chan struct{}
	done    chan struct{}
	once    sync.Once

	passes int // number of full passes evaluated
}

// newObjective prepares the loss of obs for a model kind. threads <= 1 runs
// on the calling goroutine; otherwise a pool of workers is started that
// close() stops.
func newObjective(obs *Observations, kind brdf.Kind, eps, delta float64, threads int) *objective {
	n := obs.Len()
	o := &objective{
		obs: obs, kind: kind, np: kind.NumParams(), eps: eps, delta: delta,
		nchunks: (n + chunkSize - 1) / chunkSize, clipSigma: obs.clipSigma(),
	}
	o.partLoss = make([]float64, o.nchunks)
	o.partGrad = make([][brdf.MaxParams]float64, o.nchunks)
	o.partHess = make([][brdf.MaxParams * brdf.MaxParams]float64, o.nchunks)
	for c, src := range [][]float32{obs.R, obs.G, obs.B} {
		dst := make([]float32, n)
		for i, v := range src {
			dst[i] = float32(1 / (math.Max(float64(v), 0) + eps))
		}
		o.invO[c] = dst
	}
	if threads > o.nchunks {
		threads = o.nchunks
	}
	o.threads = threads
	if threads > 1 {
		o.start = make(chan struct{})
		o.done = make(chan struct{})
		for w := 0; w < threads; w++ {
			go o.worker()
		}
	}
	return o
}

func (o *objective) close() {
	o.once.Do(func() {
		if o.start != nil {
			close(o.start)
		}
	})
}

func (o *objective) worker() {
	for range o.start {
		o.drain()
		o.done <- struct{}{}
	}
}

// drain evaluates chunks until none are left.
func (o *objective) drain() {
	for {
		c := int(o.next.Add(1) - 1)
		if c >= o.nchunks {
			return
		}
		var h *[brdf.MaxParams * brdf.MaxParams]float64
		if o.wantHess {
			h = &o.partHess[c]
		}
		o.partLoss[c] = o.chunk(c, &o.params, o.wantGrad, &o.partGrad[c], h)
	}
}

// eval returns the loss at natural parameters p and, when grad is not nil,
// writes its gradient with respect to p's vector (brdf's order) into grad.
// It allocates nothing.
func (o *objective) eval(p *brdf.Params, grad []float64) float64 {
	return o.evalHess(p, grad, nil)
}

// evalHess is eval that also writes, when hess is not nil (np*np,
// row-major), the Gauss-Newton approximation of the loss's Hessian with the
// robust loss's iteratively-reweighted-least-squares weights:
//
//	H = 1/(3N) * sum w J J^T,  w = 1/sqrt(1 + (r/delta)^2),  J = dr/dp
//
// (w = psi(r)/r, the IRLS weight of Charbonnier; Holland and Welsch,
// "Robust regression using iteratively reweighted least-squares", 1977).
func (o *objective) evalHess(p *brdf.Params, grad, hess []float64) float64 {
	o.params = *p
	o.wantGrad = grad != nil || hess != nil
	o.wantHess = hess != nil
	o.next.Store(0)
	o.passes++
	if o.threads > 1 {
		for w := 0; w < o.threads; w++ {
			o.start <- struct{}{}
		}
		for w := 0; w < o.threads; w++ {
			<-o.done
		}
	} else {
		o.drain()
	}
	// Ordered reduction: chunk 0, 1, 2, ... whatever thread computed them.
	loss := 0.0
	for c := 0; c < o.nchunks; c++ {
		loss += o.partLoss[c]
	}
	norm := 1 / float64(3*max(o.obs.Len(), 1))
	if grad != nil {
		for k := range grad[:o.np] {
			s := 0.0
			for c := 0; c < o.nchunks; c++ {
				s += o.partGrad[c][k]
			}
			grad[k] = s * norm
		}
	}
	if hess != nil {
		np := o.np
		for a := 0; a < np; a++ {
			for b := 0; b <= a; b++ {
				s := 0.0
				for c := 0; c < o.nchunks; c++ {
					s += o.partHess[c][a*np+b]
				}
				hess[a*np+b] = s * norm
				hess[b*np+a] = s * norm
			}
		}
	}
	return loss * norm
}

// logRatio returns log(y). Near the optimum y = (m+eps)/(o+eps) is close to
// 1, where the series log y = 2 atanh(z) = 2 (z + z^3/3 + z^5/5 + ...),
// z = (y-1)/(y+1), converges fast: for y in [0.8, 1.25], |z| <= 1/9 and six
// terms leave an error below 1e-13. It is several times cheaper than
// math.Log, which the objective would otherwise call three times per
// observation.
func logRatio(y float64) float64 {
	if y < 0.8 || y > 1.25 {
		return math.Log(y)
	}
	z := (y - 1) / (y + 1)
	z2 := z * z
	return 2 * z * (1 + z2*(1.0/3+z2*(1.0/5+z2*(1.0/7+z2*(1.0/9+z2*(1.0/11))))))
}

// chunk evaluates the unnormalised loss sum (and gradient sum) of one chunk.
func (o *objective) chunk(c int, p *brdf.Params, wantGrad bool, g *[brdf.MaxParams]float64, hs *[brdf.MaxParams * brdf.MaxParams]float64) float64 {
	ob := o.obs
	lo := c * chunkSize
	hi := min(lo+chunkSize, ob.Len())
	np := o.np
	eps, delta := o.eps, o.delta
	d2 := delta * delta
	inv := 1 / delta
	var gs [brdf.MaxParams]float64
	var hl [brdf.MaxParams * brdf.MaxParams]float64 // lower triangle
	wantHess := hs != nil
	var bg brdf.Grad
	var dR [3][brdf.MaxParams]float64
	var resp [3]float64
	ambient := len(ob.AR) == ob.Len() && hi > lo
	if ambient {
		if wantGrad {
			resp = ambientResponseMatte(p, &dR, ob.matteMetal)
		} else {
			resp = ambientResponseMatte(p, nil, ob.matteMetal)
		}
	}
	loss := 0.0
	for i := lo; i < hi; i++ {
		wo := brdf.Vec{X: float64(ob.WoX[i]), Y: float64(ob.WoY[i]), Z: float64(ob.WoZ[i])}
		s, e := ob.lights(i)
		var m [3]float64
		var dm [3][brdf.MaxParams]float64
		for l := s; l < e; l++ {
			wi := brdf.Vec{X: float64(ob.WiX[l]), Y: float64(ob.WiY[l]), Z: float64(ob.WiZ[l])}
			ir := [3]float64{float64(ob.ER[l]), float64(ob.EG[l]), float64(ob.EB[l])}
			if wantGrad {
				f := brdf.EvalGrad(p, wo, wi, &bg)
				for ch := 0; ch < 3; ch++ {
					m[ch] += f[ch] * ir[ch]
					for k := 0; k < np; k++ {
						dm[ch][k] += bg[ch][k] * ir[ch]
					}
				}
			} else {
				f := brdf.Eval(p, wo, wi)
				for ch := 0; ch < 3; ch++ {
					m[ch] += f[ch] * ir[ch]
				}
			}
		}
		if ambient {
			// The reflected indirect light (indirect.go), fixed per stage.
			a := [3]float64{float64(ob.AR[i]), float64(ob.AG[i]), float64(ob.AB[i])}
			for ch := 0; ch < 3; ch++ {
				m[ch] += resp[ch] * a[ch]
				if wantGrad {
					for k := 0; k < np; k++ {
						dm[ch][k] += dR[ch][k] * a[ch]
					}
				}
			}
		}
		var cens uint8
		if len(ob.Censored) > 0 {
			cens = ob.Censored[i]
		}
		for ch := 0; ch < 3; ch++ {
			me := m[ch] + eps
			r := logRatio(me * float64(o.invO[ch][i]))
			if cens&(1<<ch) != 0 {
				// A clipped channel: the photo says only that the
				// radiance is at least the clip level.
				l, dl, gw := censoredTerm(r, o.clipSigma, delta)
				loss += l
				if wantGrad {
					w := dl / me
					for k := 0; k < np; k++ {
						gs[k] += w * dm[ch][k]
					}
					if wantHess {
						wh := gw / (me * me)
						for a := 0; a < np; a++ {
							ja := wh * dm[ch][a]
							for b := 0; b <= a; b++ {
								hl[a*np+b] += ja * dm[ch][b]
							}
						}
					}
				}
				continue
			}
			q := r * inv
			sq := math.Sqrt(1 + q*q)
			loss += d2 * (sq - 1)
			if wantGrad {
				// d rho / d r = r / sqrt(1 + (r/delta)^2); d r / d m = 1/(m+eps).
				w := r / (sq * me)
				for k := 0; k < np; k++ {
					gs[k] += w * dm[ch][k]
				}
				if wantHess {
					// IRLS weight 1/sq times J J^T, J = dm/(m+eps).
					wh := 1 / (sq * me * me)
					for a := 0; a < np; a++ {
						ja := wh * dm[ch][a]
						for b := 0; b <= a; b++ {
							hl[a*np+b] += ja * dm[ch][b]
						}
					}
				}
			}
		}
	}
	*g = gs
	if wantHess {
		*hs = hl
	}
	return loss
}

// defaultClipSigma is the scale s of a clipped channel's likelihood when
// Observations.ClipSigma is 0: a relative noise of 5% on one observation
// (photon and read noise, registration and the lights' calibration
// together; a judgement, stated here).
const defaultClipSigma = 0.05

func (o *Observations) clipSigma() float64 {
	if o.ClipSigma > 0 {
		return o.ClipSigma
	}
	return defaultClipSigma
}

// normalTail returns n = -log Phi(x) and the inverse Mills ratio lambda =
// phi(x) / Phi(x) of the standard normal distribution, accurate in both
// tails: Phi(x) = erfc(-x/sqrt 2)/2 (Abramowitz and Stegun, "Handbook of
// Mathematical Functions", 1964, 26.2.29), and for x < -30, where erfc
// underflows, the asymptotic series Phi(x)/phi(x) = (1/t)(1 - 1/t^2 +
// 3/t^4 - 15/t^6 ...), t = -x (ibid. 26.2.12).
func normalTail(x float64) (n, lambda float64) {
	const invSqrt2 = 0.7071067811865476
	const logSqrt2Pi = 0.9189385332046728 // log sqrt(2 pi)
	switch {
	case x < -30:
		t := -x
		t2 := 1 / (t * t)
		ratio := (1 - t2*(1-t2*(3-15*t2))) / t // Phi/phi
		return 0.5*t*t + logSqrt2Pi - math.Log(ratio), 1 / ratio
	case x > 0:
		q := 0.5 * math.Erfc(x*invSqrt2) // 1 - Phi(x)
		phi := math.Exp(-0.5*x*x - logSqrt2Pi)
		return -math.Log1p(-q), phi / (1 - q)
	}
	p := 0.5 * math.Erfc(-x*invSqrt2)
	phi := math.Exp(-0.5*x*x - logSqrt2Pi)
	return -math.Log(p), phi / p
}

// censoredTerm returns, for the log residual r of a channel clipped at the
// observed level (model above the clip: r > 0), the loss rho(u) with u the
// deviance residual s sqrt(2 n(r/s)), its derivative with respect to r and
// its Gauss-Newton weight (see objective).
func censoredTerm(r, s, delta float64) (loss, dr, gnWeight float64) {
	n, lambda := normalTail(r / s)
	u2 := 2 * s * s * n
	sq := math.Sqrt(1 + u2/(delta*delta))
	loss = delta * delta * (sq - 1)
	dr = -s * lambda / sq
	if n > 1e-300 {
		gnWeight = lambda * lambda / (2 * n) / sq
	}
	return loss, dr, gnWeight
}
