package nn

import (
	"math"
)

// The focal loss constants of "Objects as Points" (Zhou et al. 2019, eq. 1)
// and the probability clamp used in its implementation, which keeps the
// logarithms finite.
const (
	FocalAlpha = 2
	FocalBeta  = 4
	FocalClamp = 1e-4
)

// FocalLoss is the penalty-reduced pixel-wise logistic focal loss of
// "Objects as Points", eq. 1, on heat-map logits:
//
//	L = −1/N Σ { (1−p)^α log p            where Y = 1
//	           { (1−Y)^β p^α log(1−p)     otherwise
//
// with p = sigmoid(logit) clamped to [FocalClamp, 1−FocalClamp], α = 2,
// β = 4 and N the number of points with Y exactly 1 (at least 1). It
// returns L and dL/dlogit; where the clamp is active the gradient is 0.
// Sums run in float64.
func FocalLoss[T Float](logits, target *Tensor[T]) (float64, *Tensor[T]) {
	mustSameShape("FocalLoss", logits, target)
	npos := 0
	for _, y := range target.Data {
		if y == 1 {
			npos++
		}
	}
	norm := 1 / float64(max(npos, 1))
	grad := Like(logits)
	var sum float64
	for i, z := range logits.Data {
		y := float64(target.Data[i])
		s := float64(sigmoid(z))
		p := min(max(s, FocalClamp), 1-FocalClamp)
		var f, dfdp float64
		if y == 1 {
			q := 1 - p
			f = -q * q * math.Log(p)
			dfdp = 2*q*math.Log(p) - q*q/p
		} else {
			w := math.Pow(1-y, FocalBeta)
			lq := math.Log(1 - p)
			f = -w * p * p * lq
			dfdp = -w * (2*p*lq - p*p/(1-p))
		}
		sum += f
		if s == p {
			grad.Data[i] = T(dfdp * s * (1 - s) * norm)
		}
	}
	return sum * norm, grad
}
