package render

// Distribution1D is a piecewise-constant probability density on [0,1) built
// from n non-negative function values, one per equal-width bin, sampled by
// inverting its cumulative distribution (Physically Based Rendering, 3rd
// ed., section 13.3.1).
type Distribution1D struct {
	f   []float64 // function value per bin
	cdf []float64 // n+1 entries, cdf[0] = 0, cdf[n] = 1
	// Integral is the integral of the piecewise-constant function over
	// [0,1): the mean of the bin values.
	Integral float64
}

// NewDistribution1D builds the distribution of f (values < 0 or NaN count
// as 0). When every value is zero the distribution is uniform, so sampling
// stays defined; Integral then reports 0.
func NewDistribution1D(f []float64) *Distribution1D {
	n := len(f)
	d := &Distribution1D{f: make([]float64, n), cdf: make([]float64, n+1)}
	for i, v := range f {
		if v > 0 { // also rejects NaN
			d.f[i] = v
		}
	}
	for i := 0; i < n; i++ {
		d.cdf[i+1] = d.cdf[i] + d.f[i]/float64(n)
	}
	d.Integral = d.cdf[n]
	if d.Integral == 0 {
		for i := 1; i <= n; i++ {
			d.cdf[i] = float64(i) / float64(n)
		}
	} else {
		for i := 1; i <= n; i++ {
			d.cdf[i] /= d.Integral
		}
	}
	d.cdf[n] = 1
	return d
}

// Len is the number of bins.
func (d *Distribution1D) Len() int { return len(d.f) }

// Sample maps u in [0,1) to x in [0,1) with density PDF(x); bin is the bin x
// falls in.
func (d *Distribution1D) Sample(u float64) (x, pdf float64, bin int) {
	n := len(d.f)
	// Largest i in [0, n-1] with cdf[i] <= u (binary search; cdf[0] = 0).
	lo, hi := 0, n-1
	for lo < hi {
		mid := int(uint(lo+hi+1) >> 1)
		if d.cdf[mid] <= u {
			lo = mid
		} else {
			hi = mid - 1
		}
	}
	i := lo
	// Skip zero-width bins that the search can land on when u equals a
	// repeated cdf value.
	for i < n-1 && d.cdf[i+1] <= d.cdf[i] {
		i++
	}
	w := d.cdf[i+1] - d.cdf[i]
	du := 0.0
	if w > 0 {
		du = (u - d.cdf[i]) / w
	}
	if du < 0 {
		du = 0
	}
	if du >= 1 {
		du = 0.9999999999999999
	}
	x = (float64(i) + du) / float64(n)
	if x >= 1 {
		x = 0.9999999999999999
	}
	return x, d.binPDF(i), i
}

func (d *Distribution1D) binPDF(i int) float64 {
	if d.Integral == 0 {
		return 1
	}
	return d.f[i] / d.Integral
}

// PDF is the density at x in [0,1) (0 outside).
func (d *Distribution1D) PDF(x float64) float64 {
	if !(x >= 0 && x < 1) {
		return 0
	}
	i := int(x * float64(len(d.f)))
	if i >= len(d.f) {
		i = len(d.f) - 1
	}
	return d.binPDF(i)
}

// Distribution2D is a piecewise-constant density on the unit square [0,1)^2
// over an nu x nv grid, sampled as a marginal density in v and a
// conditional density in u per row (Physically Based Rendering, 3rd ed.,
// section 13.6.7).
type Distribution2D struct {
	rows     []*Distribution1D // conditional p(u | v), one per row
	marginal *Distribution1D   // p(v)
}

// NewDistribution2D builds the distribution of f, stored row by row: f[v*nu
// + u] for nv rows of nu values. It panics if len(f) != nu*nv or a size is
// not positive (a programming error: callers size f themselves).
func NewDistribution2D(f []float64, nu, nv int) *Distribution2D {
	if nu <= 0 || nv <= 0 || len(f) != nu*nv {
		panic("render: NewDistribution2D: size mismatch")
	}
	d := &Distribution2D{rows: make([]*Distribution1D, nv)}
	m := make([]float64, nv)
	for v := 0; v < nv; v++ {
		d.rows[v] = NewDistribution1D(f[v*nu : (v+1)*nu])
		m[v] = d.rows[v].Integral
	}
	d.marginal = NewDistribution1D(m)
	return d
}

// Integral is the integral of the function over the unit square.
func (d *Distribution2D) Integral() float64 { return d.marginal.Integral }

// Sample maps u0, u1 in [0,1) to a point (u, v) in the unit square with
// density PDF(u, v); u1 picks the row, u0 the position within it.
func (d *Distribution2D) Sample(u0, u1 float64) (u, v, pdf float64) {
	v, pv, row := d.marginal.Sample(u1)
	u, pu, _ := d.rows[row].Sample(u0)
	return u, v, pv * pu
}

// PDF is the density of Sample at (u, v).
func (d *Distribution2D) PDF(u, v float64) float64 {
	if !(u >= 0 && u < 1 && v >= 0 && v < 1) {
		return 0
	}
	row := int(v * float64(len(d.rows)))
	if row >= len(d.rows) {
		row = len(d.rows) - 1
	}
	return d.marginal.PDF(v) * d.rows[row].PDF(u)
}
