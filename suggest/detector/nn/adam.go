package nn

import "math"

// Adam is the optimiser of Kingma & Ba (2015) with bias-corrected moments,
// computed as torch.optim.Adam does; WeightDecay, if set, adds
// WeightDecay·w to each gradient (L2 regularisation, PyTorch's
// weight_decay) except for parameters marked NoDecay.
type Adam[T Float] struct {
	// LR is the learning rate, Beta1 and Beta2 the moments' decay rates,
	// Eps the denominator's floor, WeightDecay the L2 coefficient.
	LR, Beta1, Beta2, Eps, WeightDecay float64

	step  int
	state map[*Param[T]]*moments[T]
}

// moments are Adam's running first and second moments of one parameter.
type moments[T Float] struct{ m, v []T }

// NewAdam returns Adam with learning rate lr, beta1 0.9, beta2 0.999 and
// eps 1e-8, the paper's defaults.
func NewAdam[T Float](lr float64) *Adam[T] {
	return &Adam[T]{LR: lr, Beta1: 0.9, Beta2: 0.999, Eps: 1e-8, state: map[*Param[T]]*moments[T]{}}
}

// Steps returns how many steps have been taken (restored by ReadParams).
func (o *Adam[T]) Steps() int { return o.step }

// Reset forgets the moments and the step count.
func (o *Adam[T]) Reset() {
	o.step = 0
	o.state = map[*Param[T]]*moments[T]{}
}

// Step updates every parameter with a gradient from its G. Parameters
// without G (buffers) are skipped.
func (o *Adam[T]) Step(params []*Param[T]) {
	if o.state == nil {
		o.state = map[*Param[T]]*moments[T]{}
	}
	o.step++
	b1, b2 := o.Beta1, o.Beta2
	bc1 := 1 - math.Pow(b1, float64(o.step))
	bc2 := math.Sqrt(1 - math.Pow(b2, float64(o.step)))
	stepSize := o.LR / bc1
	for _, p := range params {
		if p.G == nil {
			continue
		}
		st := o.state[p]
		if st == nil {
			st = &moments[T]{m: make([]T, len(p.W)), v: make([]T, len(p.W))}
			o.state[p] = st
		}
		wd := o.WeightDecay
		if p.NoDecay {
			wd = 0
		}
		for i, g := range p.G {
			gi := float64(g) + wd*float64(p.W[i])
			m := b1*float64(st.m[i]) + (1-b1)*gi
			v := b2*float64(st.v[i]) + (1-b2)*gi*gi
			st.m[i], st.v[i] = T(m), T(v)
			m, v = float64(st.m[i]), float64(st.v[i]) // as stored, like PyTorch
			p.W[i] = T(float64(p.W[i]) - stepSize*m/(math.Sqrt(v)/bc2+o.Eps))
		}
	}
}

// ZeroGrad clears the gradients, which Backward accumulates.
func (o *Adam[T]) ZeroGrad(params []*Param[T]) {
	for _, p := range params {
		clear(p.G)
	}
}
