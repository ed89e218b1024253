package render

import "math/bits"

// sobolDims is how many Sobol dimensions the sampler uses; higher
// dimensions of a path are "padded" by independently scrambling these
// (Burley 2020, section 4).
const sobolDims = 4

// sobolMatrices holds the 32 direction numbers of each of the first four
// dimensions of the Sobol sequence, as 32-bit fractions (bit 31 = 1/2).
// Dimension 0 is the van der Corput sequence; dimensions 1..3 follow the
// primitive polynomials and initial numbers of Joe and Kuo's
// new-joe-kuo-6.21201 table (d=2: s=1 a=0 m=1; d=3: s=2 a=1 m=1,3; d=4: s=3
// a=1 m=1,3,1), the same numbers SciPy's scipy.stats.qmc.Sobol uses; the
// test checks the unscrambled points against SciPy.
var sobolMatrices = func() (v [sobolDims][32]uint32) {
	type poly struct {
		s, a uint32
		m    []uint32
	}
	polys := []poly{{1, 0, []uint32{1}}, {2, 1, []uint32{1, 3}}, {3, 1, []uint32{1, 3, 1}}}
	for i := 0; i < 32; i++ {
		v[0][i] = 1 << (31 - i)
	}
	for d, p := range polys {
		w := &v[d+1]
		s := int(p.s)
		for i := 0; i < 32; i++ {
			if i < s {
				w[i] = p.m[i] << (31 - i)
				continue
			}
			x := w[i-s] ^ (w[i-s] >> p.s)
			for k := 1; k < s; k++ {
				if (p.a>>(s-1-k))&1 == 1 {
					x ^= w[i-k]
				}
			}
			w[i] = x
		}
	}
	return
}()

// sobolBytes holds, per dimension and per byte of the index, the XOR of
// the direction numbers selected by each of the 256 byte values, so a
// point costs four lookups instead of a loop over 32 bits.
var sobolBytes = func() (t [sobolDims][4][256]uint32) {
	for d := 0; d < sobolDims; d++ {
		for b := 0; b < 4; b++ {
			for v := 0; v < 256; v++ {
				var x uint32
				for i := 0; i < 8; i++ {
					if v>>i&1 != 0 {
						x ^= sobolMatrices[d][8*b+i]
					}
				}
				t[d][b][v] = x
			}
		}
	}
	return
}()

// sobolRevBytes is sobolBytes for the map y -> Reverse32(sobol(Reverse32(y),
// dim)), which is linear over GF(2) like sobol itself: bit b of y selects
// the reversed direction number of bit 31-b of the index. The sampler's
// scrambles work on reversed values (owenScramble), so with it a
// scrambled point costs one reversal instead of three.
var sobolRevBytes = func() (t [sobolDims][4][256]uint32) {
	for d := 0; d < sobolDims; d++ {
		for b := 0; b < 4; b++ {
			for v := 0; v < 256; v++ {
				var x uint32
				for i := 0; i < 8; i++ {
					if v>>i&1 != 0 {
						x ^= bits.Reverse32(sobolMatrices[d][31-(8*b+i)])
					}
				}
				t[d][b][v] = x
			}
		}
	}
	return
}()

// sobolRev returns Reverse32(sobol(Reverse32(y), dim)).
func sobolRev(y uint32, dim int) uint32 {
	t := &sobolRevBytes[dim]
	return t[0][y&0xff] ^ t[1][y>>8&0xff] ^ t[2][y>>16&0xff] ^ t[3][y>>24]
}

// sobol returns the 32-bit fraction of point index in dimension dim
// (dim < sobolDims) of the unscrambled Sobol sequence.
func sobol(index uint32, dim int) uint32 {
	t := &sobolBytes[dim]
	return t[0][index&0xff] ^ t[1][index>>8&0xff] ^ t[2][index>>16&0xff] ^ t[3][index>>24]
}

// laineKarras is the hash-based bit permutation of Burley, "Practical
// hash-based Owen scrambling", JCGT 9(4), 2020, listing 3 (after Laine and
// Karras): each output bit depends only on the same and lower input bits,
// so applied to a bit-reversed value it is a nested uniform (Owen) scramble.
func laineKarras(x, seed uint32) uint32 {
	x += seed
	x ^= x * 0x6c50b47c
	x ^= x * 0xb82f1e52
	x ^= x * 0xc7afe638
	x ^= x * 0x8d22f6e6
	return x
}

// owenScramble is the nested uniform scramble in base 2 of a 32-bit
// fraction (Burley 2020, listing 4): reverse, permute, reverse back.
func owenScramble(x, seed uint32) uint32 {
	return bits.Reverse32(laineKarras(bits.Reverse32(x), seed))
}

// mix64 is the SplitMix64 finaliser (Steele, Lea and Flood 2014), used to
// derive independent 32-bit seeds from (seed, pixel, dimension).
func mix64(z uint64) uint64 {
	z += 0x9e3779b97f4a7c15
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	return z ^ (z >> 31)
}
