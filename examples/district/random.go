package district

import (
	"math"
	"math/bits"
	"math/rand/v2"
)

// The generator's fixed seed. Changing either number changes every byte of
// the survey.
const (
	seedHi = 20240917
	seedLo = 6000
)

// stream turns the 64-bit outputs of a PCG generator into the draws the
// survey needs. The conversions are written here, not borrowed from
// rand.Rand, so the survey depends only on PCG itself (O'Neill 2014).
type stream struct {
	src    *rand.PCG
	spare  float64 // second normal of the last Box–Muller pair
	hasOne bool
}

func newStream(seed1, seed2 uint64) *stream {
	return &stream{src: rand.NewPCG(seed1, seed2)}
}

// uniform returns a draw from [0, 1) with 53 random bits.
func (g *stream) uniform() float64 {
	return float64(g.src.Uint64()>>11) * 0x1p-53
}

// intn returns a draw from {0, ..., n-1} by the multiply-high map of Lemire
// (2019) without its rejection step; the bias, below n/2^64, is immaterial
// for the small n used here.
func (g *stream) intn(n int) int {
	if n <= 0 {
		panic("district: intn needs n > 0")
	}
	hi, _ := bits.Mul64(g.src.Uint64(), uint64(n))
	return int(hi)
}

// normal returns a standard normal draw by the Box–Muller transform (Box and
// Muller 1958), handing out both members of each pair.
func (g *stream) normal() float64 {
	if g.hasOne {
		g.hasOne = false
		return g.spare
	}
	u1 := 1 - g.uniform() // in (0, 1], so the logarithm is finite
	u2 := g.uniform()
	r := math.Sqrt(-2 * math.Log(u1))
	sin, cos := math.Sincos(2 * math.Pi * u2)
	g.spare, g.hasOne = r*sin, true
	return r * cos
}
