package nn

import "fmt"

// Float is the element type of every tensor: float32 for the detector,
// float64 for the gradient checks, which need the extra digits.
type Float interface{ ~float32 | ~float64 }

// Tensor is a dense 4-D array in NCHW order (batch, channel, row, column);
// element (n, c, h, w) is Data[((n*C+c)*H+h)*W+w].
type Tensor[T Float] struct {
	// N, C, H, W are the batch size, channels, height and width.
	N, C, H, W int
	// Data holds the elements, N·C·H·W of them.
	Data []T
}

// New wraps data as an n×c×h×w tensor without copying. It panics if the
// length does not match the shape: that is a programming error.
func New[T Float](n, c, h, w int, data []T) *Tensor[T] {
	if n < 0 || c < 0 || h < 0 || w < 0 || len(data) != n*c*h*w {
		panic(fmt.Sprintf("nn.New: %d elements for shape %dx%dx%dx%d", len(data), n, c, h, w))
	}
	return &Tensor[T]{N: n, C: c, H: h, W: w, Data: data}
}

// Zeros returns a new n×c×h×w tensor of zeros.
func Zeros[T Float](n, c, h, w int) *Tensor[T] {
	if n < 0 || c < 0 || h < 0 || w < 0 {
		panic(fmt.Sprintf("nn.Zeros: negative shape %dx%dx%dx%d", n, c, h, w))
	}
	return &Tensor[T]{N: n, C: c, H: h, W: w, Data: make([]T, n*c*h*w)}
}

// Like returns a new tensor of zeros with the shape of t.
func Like[T Float](t *Tensor[T]) *Tensor[T] { return Zeros[T](t.N, t.C, t.H, t.W) }

// Shape returns (N, C, H, W).
func (t *Tensor[T]) Shape() [4]int { return [4]int{t.N, t.C, t.H, t.W} }

// Len returns the number of elements.
func (t *Tensor[T]) Len() int { return len(t.Data) }

// Index returns the position of element (n, c, h, w) in Data.
func (t *Tensor[T]) Index(n, c, h, w int) int { return ((n*t.C+c)*t.H+h)*t.W + w }

// At returns element (n, c, h, w).
func (t *Tensor[T]) At(n, c, h, w int) T { return t.Data[t.Index(n, c, h, w)] }

// Set sets element (n, c, h, w) to v.
func (t *Tensor[T]) Set(n, c, h, w int, v T) { t.Data[t.Index(n, c, h, w)] = v }

// Image returns the C×H×W elements of batch item n, sharing storage.
func (t *Tensor[T]) Image(n int) []T {
	s := t.C * t.H * t.W
	return t.Data[n*s : (n+1)*s : (n+1)*s]
}

// Plane returns the H×W elements of channel c of batch item n, sharing
// storage.
func (t *Tensor[T]) Plane(n, c int) []T {
	s := t.H * t.W
	i := (n*t.C + c) * s
	return t.Data[i : i+s : i+s]
}

// Clone returns a deep copy of t.
func (t *Tensor[T]) Clone() *Tensor[T] {
	u := Like(t)
	elementwise(len(t.Data), func(lo, hi int) { copy(u.Data[lo:hi], t.Data[lo:hi]) })
	return u
}

// SameShape reports whether t and u have the same shape.
func (t *Tensor[T]) SameShape(u *Tensor[T]) bool { return t.Shape() == u.Shape() }

// AddFrom adds u to t element by element, for summing the gradients of a
// tensor that feeds two layers. It panics if the shapes differ.
func (t *Tensor[T]) AddFrom(u *Tensor[T]) {
	mustSameShape("AddFrom", t, u)
	elementwise(len(u.Data), func(lo, hi int) { addTo(t.Data[lo:hi], u.Data[lo:hi]) })
}

// String gives the shape, for messages.
func (t *Tensor[T]) String() string {
	return fmt.Sprintf("Tensor(%dx%dx%dx%d)", t.N, t.C, t.H, t.W)
}

func mustSameShape[T Float](op string, a, b *Tensor[T]) {
	if !a.SameShape(b) {
		panic(fmt.Sprintf("nn.%s: shapes %v and %v differ", op, a.Shape(), b.Shape()))
	}
}
