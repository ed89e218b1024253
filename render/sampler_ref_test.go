package render

import "testing"

// TestSamplerMatchesDefinition: the sampler's numbers are, bit for bit,
// those of its documented construction (Burley 2020, listings 3 and 4:
// the index shuffled by owenScramble, each dimension's Sobol point
// scrambled by owenScramble with its own seed), evaluated here the long
// way, for many seeds, pixels, indices and groups.
func TestSamplerMatchesDefinition(t *testing.T) {
	var s Sampler
	for _, seed := range []uint64{0, 1, 77, 1 << 40} {
		for _, px := range [][2]int{{0, 0}, {5, 3}, {1279, 959}, {-1, 2}} {
			for _, index := range []uint32{0, 1, 2, 3, 7, 31, 1000, 1<<31 + 5} {
				s.Start(seed, px[0], px[1], index)
				pixel := mix64(mix64(seed) ^ (uint64(uint32(px[0])) | uint64(uint32(px[1]))<<32))
				for group := uint64(0); group < 12; group++ {
					g := mix64(pixel + group*0xd1b54a32d192ed03)
					i := owenScramble(index, uint32(g))
					h := mix64(g)
					want := [3]float64{
						float64(owenScramble(sobol(i, 0), uint32(g>>32))) * inv32,
						float64(owenScramble(sobol(i, 1), uint32(h))) * inv32,
						float64(owenScramble(sobol(i, 2), uint32(h>>32))) * inv32,
					}
					var got [3]float64
					switch group % 3 {
					case 0:
						got[0] = s.Get1D()
						want[1], want[2] = 0, 0
					case 1:
						got[0], got[1] = s.Get2D()
						want[2] = 0
					case 2:
						got = s.Get3D()
					}
					if got != want {
						t.Fatalf("seed %d pixel %v index %d group %d: %v, want %v", seed, px, index, group, got, want)
					}
				}
			}
		}
	}
}
