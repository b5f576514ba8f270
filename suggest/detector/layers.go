package detector

import (
	"math/rand/v2"
	"strings"

	"boxwright/suggest/detector/nn"
)

// The network's building blocks, all float32.

func newConv(name string, in, out, k, stride, pad int, bias bool, r *rand.Rand) *nn.Conv2D[float32] {
	return nn.NewConv2D[float32](name, in, out, k, stride, pad, bias, r)
}

func newBatchNorm(name string, c int) *nn.BatchNorm2D[float32] {
	return nn.NewBatchNorm2D[float32](name, c)
}

func newReLU() *nn.ReLU[float32] { return &nn.ReLU[float32]{} }

func newUpsample() *nn.Upsample2x[float32] { return &nn.Upsample2x[float32]{} }

// setBias sets every bias of a layer to v.
func setBias(l layer, v float32) {
	for _, p := range l.Params() {
		if strings.HasSuffix(p.Name, "bias") {
			for i := range p.W {
				p.W[i] = v
			}
		}
	}
}

func focalLoss(logits, target *tensor) (float64, *tensor) { return nn.FocalLoss(logits, target) }
