package mock

import "math"

// Streams of the counter-based generator: each use of randomness has its
// own, so changing one step never shifts another's numbers.
const (
	streamNoise  = 1 // white noise of the initial field, two per cell
	streamParent = 2 // biased choice of parent galaxies, one per particle
	streamThin   = 3 // survey thinning, one per particle image
)

// mix64 is the finaliser of SplitMix64 (Steele, Lea & Flood 2014), a
// bijection of 64-bit words with full avalanche.
func mix64(z uint64) uint64 {
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	return z ^ (z >> 31)
}

// hash returns a pseudo-random 64-bit word for (seed, stream, i): two
// rounds of SplitMix64 over the words combined with distinct odd constants.
func hash(seed uint64, stream, i uint64) uint64 {
	return mix64(mix64(seed^(stream*0x9e3779b97f4a7c15)) + i*0xd1b54a32d192ed03)
}

// uniform returns a number in (0, 1) from the top 53 bits of hash(seed, stream, i).
func uniform(seed uint64, stream, i uint64) float64 {
	return (float64(hash(seed, stream, i)>>11) + 0.5) * (1.0 / (1 << 53))
}

// normal returns a standard normal deviate for counter i of a stream, by
// the Box–Muller transform (Box & Muller 1958) of two uniforms drawn at
// counters 2i and 2i+1.
func normal(seed uint64, stream, i uint64) float64 {
	u1 := uniform(seed, stream, 2*i)
	u2 := uniform(seed, stream, 2*i+1)
	return math.Sqrt(-2*math.Log(u1)) * math.Cos(2*math.Pi*u2)
}
