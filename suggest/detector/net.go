package detector

import (
	"math/rand/v2"

	"boxwright/suggest/detector/nn"
)

// Architecture names the network below and the layout of its weights;
// change it whenever either changes, so that stored models of another
// layout are refused rather than misread.
const Architecture = "centre-heatmap/3"

type tensor = nn.Tensor[float32]

type layer = nn.Layer[float32]

// block is conv → batch norm → ReLU.
type block = nn.Sequential[float32]

func newBlock(name string, in, out, stride int, r *rand.Rand) *block {
	return nn.NewSequential[float32](newConv(name+".conv", in, out, 3, stride, 1, false, r), newBatchNorm(name+".bn", out), newReLU())
}

// Net is the detector: a small encoder down to stride 16, a decoder back
// to stride 4 that adds the encoder's maps of the same stride (a feature
// pyramid in the manner of U-Net's skips), a shared 3×3 trunk and two 1×1
// heads: per-class centre logits and, per cell, the log-distances from the
// cell to the four sides of its object's box.
type Net struct {
	Classes int
	// encoder
	e1, e2, e3, e4, e5, e6, e7 *block
	// decoder: d1 at stride 16 → up → + e5; d2 at stride 8 → up → + e3
	d1, d2   *block
	up1, up2 layer
	trunk    *block
	heat     layer
	box      layer
}

// heatBias starts the heat logits at a probability of about 0.1 for every
// cell, so that the focal loss does not begin with a flood of false
// positives ("Objects as Points" takes −2.19 from RetinaNet's prior).
const heatBias = -2.19

// boxBias starts every distance at Stride·e^1.4 ≈ 16 input pixels, a
// middling object, rather than at one cell.
const boxBias = 1.4

// NewNet builds the network for the given number of classes with seeded
// initial weights.
func NewNet(classes int, seed uint64) *Net {
	r := rand.New(rand.NewPCG(seed, 0x6e6574))
	n := &Net{Classes: classes,
		e1: newBlock("e1", 3, 16, 2, r), e2: newBlock("e2", 16, 32, 2, r), e3: newBlock("e3", 32, 32, 1, r),
		e4: newBlock("e4", 32, 64, 2, r), e5: newBlock("e5", 64, 64, 1, r),
		e6: newBlock("e6", 64, 128, 2, r), e7: newBlock("e7", 128, 128, 1, r),
		d1: newBlock("d1", 128, 64, 1, r), d2: newBlock("d2", 64, 32, 1, r),
		up1: newUpsample(), up2: newUpsample(),
		trunk: newBlock("trunk", 32, 32, 1, r),
		heat:  newConv("heat", 32, classes, 1, 1, 0, true, r),
		box:   newConv("box", 32, 4, 1, 1, 0, true, r),
	}
	setBias(n.heat, heatBias)
	setBias(n.box, boxBias)
	// Nothing needs the gradient of the image itself.
	n.e1.Layers[0].(*nn.Conv2D[float32]).SkipInputGrad = true
	return n
}

func (n *Net) layers() []layer {
	return []layer{n.e1, n.e2, n.e3, n.e4, n.e5, n.e6, n.e7, n.d1, n.d2, n.trunk, n.heat, n.box}
}

// Layer returns a named part of the network, for exporters that rebuild
// Forward's graph in another format: the conv → batch norm → ReLU blocks
// "e1" … "e7", "d1", "d2" and "trunk" (each an *nn.Sequential of
// *nn.Conv2D, *nn.BatchNorm2D and *nn.ReLU) and the 1×1 heads "heat" and
// "box" (*nn.Conv2D); nil for any other name. Forward says how they
// connect; Architecture changes when that does.
func (n *Net) Layer(name string) layer {
	switch name {
	case "e1":
		return n.e1
	case "e2":
		return n.e2
	case "e3":
		return n.e3
	case "e4":
		return n.e4
	case "e5":
		return n.e5
	case "e6":
		return n.e6
	case "e7":
		return n.e7
	case "d1":
		return n.d1
	case "d2":
		return n.d2
	case "trunk":
		return n.trunk
	case "heat":
		return n.heat
	case "box":
		return n.box
	}
	return nil
}

// Params lists every learnable parameter in a fixed order.
func (n *Net) Params() []*nn.Param[float32] {
	var ps []*nn.Param[float32]
	for _, l := range n.layers() {
		ps = append(ps, l.Params()...)
	}
	return ps
}

// State lists the parameters and then the buffers (batch-norm running
// statistics): everything a stored model holds, in the order stored.
func (n *Net) State() []*nn.Param[float32] {
	ps := n.Params()
	for _, l := range n.layers() {
		if b, ok := l.(nn.Buffered[float32]); ok {
			ps = append(ps, b.Buffers()...)
		}
	}
	return ps
}

// Outputs are the raw maps of one forward pass at stride 4.
type Outputs struct {
	Heat *tensor // logits, N×C×H×W
	Box  *tensor // raw log-distances, N×4×H×W (see distanceOf)
}

// Forward runs the network on a batch (N×3×H×W, sides multiples of 32).
func (n *Net) Forward(x *tensor, train bool) Outputs {
	a := n.e1.Forward(x, train)
	s4 := n.e3.Forward(n.e2.Forward(a, train), train)
	s8 := n.e5.Forward(n.e4.Forward(s4, train), train)
	s16 := n.e7.Forward(n.e6.Forward(s8, train), train)
	u8 := n.up1.Forward(n.d1.Forward(s16, train), train)
	u8 = add(u8, s8)
	u4 := n.up2.Forward(n.d2.Forward(u8, train), train)
	u4 = add(u4, s4)
	t := n.trunk.Forward(u4, train)
	return Outputs{Heat: n.heat.Forward(t, train), Box: n.box.Forward(t, train)}
}

// Backward takes the gradients of the loss with respect to the three
// outputs and accumulates every parameter's gradient.
func (n *Net) Backward(g Outputs) {
	dt := n.heat.Backward(g.Heat)
	dt.AddFrom(n.box.Backward(g.Box))
	du4 := n.trunk.Backward(dt)
	ds4 := du4.Clone() // the skip's share
	du8 := n.d2.Backward(n.up2.Backward(du4))
	ds8 := du8.Clone()
	ds16 := n.d1.Backward(n.up1.Backward(du8))
	ds8.AddFrom(n.e6.Backward(n.e7.Backward(ds16)))
	ds4.AddFrom(n.e4.Backward(n.e5.Backward(ds8)))
	n.e1.Backward(n.e2.Backward(n.e3.Backward(ds4)))
}

// add returns a+b as a new tensor (both branches keep their own).
func add(a, b *tensor) *tensor {
	out := a.Clone()
	out.AddFrom(b)
	return out
}
