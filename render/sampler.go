package render

import "math/bits"

// Sampler yields the uniform numbers of one pixel sample. The numbers are a
// pure function of (seed, pixel, sample index, dimension), never of thread
// scheduling, which is what makes a render bit-identical on any number of
// cores.
//
// The sequence is the Sobol sequence with hash-based Owen scrambling and
// index shuffling, padded to any number of dimensions (Burley, "Practical
// hash-based Owen scrambling", JCGT 9(4), 2020): each request (a 1-, 2- or
// 3-dimensional group) takes the first dimensions of the Sobol sequence at
// a shuffled index, with seeds hashed from the pixel and the group number,
// so every group is a scrambled (0,2)-sequence in its first two dimensions
// and the groups are mutually independent.
type Sampler struct {
	pixel uint64
	index uint32
	rev   uint32 // bits.Reverse32(index)
	group uint64
}

const inv32 = 1.0 / (1 << 32)

// Start positions the sampler at sample index of pixel (px, py) for the
// render seed.
func (s *Sampler) Start(seed uint64, px, py int, index uint32) {
	s.pixel = mix64(mix64(seed) ^ (uint64(uint32(px)) | uint64(uint32(py))<<32))
	s.index = index
	s.rev = bits.Reverse32(index)
	s.group = 0
}

// nextSeeds returns the next group's shuffled index, bit-reversed
// (Reverse32(owenScramble(index, g)), the form sobolRev takes), and its
// seed g.
func (s *Sampler) nextSeeds() (revShuffled uint32, g uint64) {
	g = mix64(s.pixel + s.group*0xd1b54a32d192ed03)
	s.group++
	return laineKarras(s.rev, uint32(g)), g
}

// point is owenScramble(sobol(i, dim), seed) for the index i whose
// reversal is r, with one bit reversal (sobolRev).
func point(r uint32, dim int, seed uint32) uint32 {
	return bits.Reverse32(laineKarras(sobolRev(r, dim), seed))
}

// Get1D returns the next number in [0,1).
func (s *Sampler) Get1D() float64 {
	r, g := s.nextSeeds()
	return float64(point(r, 0, uint32(g>>32))) * inv32
}

// Get2D returns the next pair in [0,1)^2.
func (s *Sampler) Get2D() (float64, float64) {
	r, g := s.nextSeeds()
	h := mix64(g)
	x := point(r, 0, uint32(g>>32))
	y := point(r, 1, uint32(h))
	return float64(x) * inv32, float64(y) * inv32
}

// Get3D returns the next triple in [0,1)^3.
func (s *Sampler) Get3D() [3]float64 {
	r, g := s.nextSeeds()
	h := mix64(g)
	x := point(r, 0, uint32(g>>32))
	y := point(r, 1, uint32(h))
	z := point(r, 2, uint32(h>>32))
	return [3]float64{float64(x) * inv32, float64(y) * inv32, float64(z) * inv32}
}
