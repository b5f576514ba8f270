package nn

import "fmt"

// Param is a learnable array or a saved buffer: W holds the values, G the
// gradient that Backward adds to (nil for buffers such as running
// statistics, which no optimiser touches).
type Param[T Float] struct {
	// Name identifies the array in saved blobs, e.g. "stem.weight".
	Name string
	// Shape is the array's shape, row-major; W (and G) hold as many values
	// as its product.
	Shape []int
	// W holds the values, G the gradient.
	W, G []T
	// NoDecay exempts the parameter from weight decay; the layers set it on
	// biases and batch-norm scales, as is usual.
	NoDecay bool
}

func newParam[T Float](name string, grad bool, shape ...int) *Param[T] {
	n := 1
	for _, d := range shape {
		n *= d
	}
	p := &Param[T]{Name: name, Shape: shape, W: make([]T, n)}
	if grad {
		p.G = make([]T, n)
	}
	return p
}

// Layer is one step of a network. Forward with train set keeps what
// Backward needs (until Backward), so a layer instance appears once in a
// graph and each training Forward is followed by at most one Backward;
// Forward with train unset keeps nothing, so inference holds no memory
// between calls. Backward returns the gradient with respect to the input
// of the last Forward and adds the parameter gradients to their G.
type Layer[T Float] interface {
	Forward(x *Tensor[T], train bool) *Tensor[T]
	Backward(dy *Tensor[T]) *Tensor[T]
	Params() []*Param[T]
}

// Buffered is a layer with saved state that is not learnt, such as the
// running statistics of batch normalisation.
type Buffered[T Float] interface {
	Buffers() []*Param[T]
}

// Sequential runs layers one after another.
type Sequential[T Float] struct {
	// Layers run first to last.
	Layers []Layer[T]
}

// NewSequential returns the chain of the given layers.
func NewSequential[T Float](layers ...Layer[T]) *Sequential[T] {
	return &Sequential[T]{Layers: layers}
}

// Forward runs every layer in order.
func (s *Sequential[T]) Forward(x *Tensor[T], train bool) *Tensor[T] {
	for _, l := range s.Layers {
		x = l.Forward(x, train)
	}
	return x
}

// Backward runs every layer's Backward in reverse order; it stops early and
// returns nil if a layer does not compute its input gradient.
func (s *Sequential[T]) Backward(dy *Tensor[T]) *Tensor[T] {
	for i := len(s.Layers) - 1; i >= 0 && dy != nil; i-- {
		dy = s.Layers[i].Backward(dy)
	}
	return dy
}

// Params returns the parameters of all layers in order.
func (s *Sequential[T]) Params() []*Param[T] {
	var ps []*Param[T]
	for _, l := range s.Layers {
		ps = append(ps, l.Params()...)
	}
	return ps
}

// Buffers returns the buffers of all layers that have some, in order.
func (s *Sequential[T]) Buffers() []*Param[T] {
	var ps []*Param[T]
	for _, l := range s.Layers {
		if b, ok := l.(Buffered[T]); ok {
			ps = append(ps, b.Buffers()...)
		}
	}
	return ps
}

func mustForward(layer string, x any) {
	if x == nil {
		panic(fmt.Sprintf("nn.%s: no training Forward to go back through", layer))
	}
}
