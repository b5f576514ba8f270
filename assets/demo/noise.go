package demo

import "math"

// hash2 mixes a lattice point and a seed into 64 well-spread bits (the
// splitmix64 finaliser), so texture needs no random stream of its own.
func hash2(x, y int64, seed uint64) uint64 {
	z := seed ^ uint64(x)*0x9E3779B97F4A7C15 ^ uint64(y)*0xC2B2AE3D27D4EB4F
	z ^= z >> 30
	z *= 0xBF58476D1CE4E5B9
	z ^= z >> 27
	z *= 0x94D049BB133111EB
	z ^= z >> 31
	return z
}

// unit maps hash bits to [0,1).
func unit(z uint64) float64 { return float64(z>>11) / (1 << 53) }

// valueNoise is smooth noise in [0,1) with features about one unit apart.
func valueNoise(x, y float64, seed uint64) float64 {
	fx, fy := math.Floor(x), math.Floor(y)
	ix, iy := int64(fx), int64(fy)
	tx, ty := x-fx, y-fy
	tx = tx * tx * (3 - 2*tx)
	ty = ty * ty * (3 - 2*ty)
	a := unit(hash2(ix, iy, seed))
	b := unit(hash2(ix+1, iy, seed))
	c := unit(hash2(ix, iy+1, seed))
	d := unit(hash2(ix+1, iy+1, seed))
	top := a + (b-a)*tx
	bot := c + (d-c)*tx
	return top + (bot-top)*ty
}

// fbm sums octaves of value noise, each twice as fine and half as strong,
// normalised to [0,1).
func fbm(x, y float64, seed uint64, octaves int) float64 {
	sum, amp, norm := 0.0, 1.0, 0.0
	for o := range octaves {
		sum += amp * valueNoise(x, y, seed+uint64(o)*0x632BE59BD9B4E019)
		norm += amp
		amp *= 0.5
		// The odd factor and offsets keep octave lattices from lining up.
		x, y = x*2.03+1.7, y*2.03+9.2
	}
	return sum / norm
}

// wave is a cheap sine (error about 0.001) for ripple texture, where the
// full accuracy of math.Sin buys nothing and costs a fifth of a frame.
func wave(x float64) float64 {
	const tau = 2 * math.Pi
	x -= tau * math.Floor(x/tau+0.5) // into [-π, π)
	y := 4/math.Pi*x - 4/(math.Pi*math.Pi)*x*math.Abs(x)
	return y + 0.225*(y*math.Abs(y)-y)
}
