package nn

import (
	"bytes"
	"errors"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
)

// testModel is a conv, a batch norm and a biased 1×1 conv: parameters,
// buffers and NoDecay ones.
func testModel(seed uint64) (*Sequential[float32], []*Param[float32]) {
	r := rand.New(rand.NewPCG(seed, 1))
	m := NewSequential[float32](
		NewConv2D[float32]("c1", 3, 4, 3, 1, 1, false, r),
		NewBatchNorm2D[float32]("bn1", 4),
		&ReLU[float32]{},
		NewConv2D[float32]("head", 4, 2, 1, 1, 0, true, r),
	)
	return m, append(m.Params(), m.Buffers()...)
}

// trained takes two Adam steps so that every saved array is non-trivial.
func trained(t *testing.T) (*Sequential[float32], []*Param[float32], *Adam[float32]) {
	t.Helper()
	m, all := testModel(1)
	opt := NewAdam[float32](0.01)
	opt.WeightDecay = 1e-4
	r := rand.New(rand.NewPCG(2, 2))
	for range 2 {
		x := New(2, 3, 6, 5, rand32(r, 2*3*6*5, 1, 0))
		y := m.Forward(x, true)
		opt.ZeroGrad(m.Params())
		m.Backward(New(y.N, y.C, y.H, y.W, rand32(r, y.Len(), 1, 0)))
		opt.Step(m.Params())
	}
	return m, all, opt
}

func blob(t *testing.T, params []*Param[float32], opt *Adam[float32]) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := WriteParams(&b, params, opt); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

func snapshot(params []*Param[float32]) [][]float32 {
	var s [][]float32
	for _, p := range params {
		s = append(s, slices.Clone(p.W))
	}
	return s
}

func unchanged(t *testing.T, what string, params []*Param[float32], before [][]float32) {
	t.Helper()
	for i, p := range params {
		if !slices.Equal(p.W, before[i]) {
			t.Fatalf("%s: %s changed although the read failed", what, p.Name)
		}
	}
}

// TestParamsRoundTrip writes a trained model with its Adam state, reads it
// into a fresh one, and checks that both then train identically. Source:
// this package's format (round trip).
func TestParamsRoundTrip(t *testing.T) {
	m, all, opt := trained(t)
	data := blob(t, all, opt)

	m2, all2 := testModel(99)
	opt2 := NewAdam[float32](0.01)
	opt2.WeightDecay = 1e-4
	rest := append(slices.Clone(data), "TAIL"...)
	rd := bytes.NewReader(rest)
	if err := ReadParams(rd, all2, opt2); err != nil {
		t.Fatal(err)
	}
	if tail, _ := rd.ReadByte(); tail != 'T' || rd.Len() != 3 {
		t.Errorf("ReadParams did not stop at the end of the blob")
	}
	for i := range all {
		if !slices.Equal(all[i].W, all2[i].W) {
			t.Fatalf("%s differs after the round trip", all[i].Name)
		}
	}
	if opt2.Steps() != 2 {
		t.Errorf("Adam steps = %d, want 2", opt2.Steps())
	}
	// One more identical step on both must give identical weights, which
	// needs the moments back too.
	r := rand.New(rand.NewPCG(3, 3))
	x := New(2, 3, 6, 5, rand32(r, 2*3*6*5, 1, 0))
	for _, mo := range []struct {
		m   *Sequential[float32]
		opt *Adam[float32]
	}{{m, opt}, {m2, opt2}} {
		y := mo.m.Forward(x, true)
		mo.opt.ZeroGrad(mo.m.Params())
		mo.m.Backward(New(y.N, y.C, y.H, y.W, slices.Repeat([]float32{0.5}, y.Len())))
		mo.opt.Step(mo.m.Params())
	}
	for i := range all {
		if !slices.Equal(all[i].W, all2[i].W) {
			t.Fatalf("%s differs after a step from the restored state", all[i].Name)
		}
	}

	// Without Adam state: the optimiser given is reset.
	data = blob(t, all, nil)
	if err := ReadParams(bytes.NewReader(data), all2, opt2); err != nil {
		t.Fatal(err)
	}
	if opt2.Steps() != 0 || len(opt2.state) != 0 {
		t.Errorf("Adam state survived reading a blob without one")
	}

	// float32 blob into a float64 model.
	r = rand.New(rand.NewPCG(1, 1))
	c64 := NewConv2D[float64]("c1", 3, 4, 3, 1, 1, false, r)
	var one bytes.Buffer
	if err := WriteParams(&one, all[:1], nil); err != nil {
		t.Fatal(err)
	}
	if err := ReadParams(&one, c64.Params(), nil); err != nil {
		t.Fatal(err)
	}
	for i, v := range all[0].W {
		if c64.Weight.W[i] != float64(v) {
			t.Fatalf("float32 → float64: element %d is %v, want %v", i, c64.Weight.W[i], v)
		}
	}
}

// TestParamsCorrupt flips every byte and truncates at every length: each
// must give an error, no panic, and leave the model as it was. Source:
// this package's format (CRC-32 and record checksums).
func TestParamsCorrupt(t *testing.T) {
	_, all, opt := trained(t)
	data := blob(t, all, opt)
	_, all2 := testModel(5)
	before := snapshot(all2)
	named := 0
	for i := range data {
		bad := slices.Clone(data)
		bad[i] ^= 0x5a
		err := ReadParams(bytes.NewReader(bad), all2, NewAdam[float32](0.01))
		if err == nil {
			t.Fatalf("byte %d flipped: no error", i)
		}
		if !errors.Is(err, ErrCorrupt) && !errors.Is(err, ErrFormat) {
			t.Fatalf("byte %d flipped: %v does not wrap ErrCorrupt or ErrFormat", i, err)
		}
		if strings.Contains(err.Error(), `"c1.weight"`) {
			named++
		}
		unchanged(t, "flip", all2, before)
	}
	if named < 4*3*3*3*4*3 { // at least every byte of c1.weight's values and moments
		t.Errorf("only %d flips named the parameter c1.weight", named)
	}
	for n := range len(data) {
		err := ReadParams(bytes.NewReader(data[:n]), all2, nil)
		if err == nil {
			t.Fatalf("truncated to %d of %d bytes: no error", n, len(data))
		}
		if !errors.Is(err, ErrCorrupt) {
			t.Fatalf("truncated to %d bytes: %v does not wrap ErrCorrupt", n, err)
		}
		unchanged(t, "truncation", all2, before)
	}
	// A cut inside the head's values names it.
	cut := bytes.Index(data, []byte("head.bias")) + 40
	err := ReadParams(bytes.NewReader(data[:cut]), all2, nil)
	if err == nil || !strings.Contains(err.Error(), `"head.bias"`) || !strings.Contains(err.Error(), "truncated") {
		t.Errorf("cut in head.bias: %v", err)
	}
	t.Logf("e.g. %v", err)
	bad := slices.Clone(data)
	bad[bytes.Index(data, []byte("bn1.weight"))+12] ^= 1
	t.Logf("e.g. %v", ReadParams(bytes.NewReader(bad), all2, nil))
	if err := ReadParams(strings.NewReader("PK\x03\x04 a zip file"), all2, nil); !errors.Is(err, ErrFormat) {
		t.Errorf("a zip file: %v", err)
	}
}

// TestParamsMismatch: a sound blob of another model is refused by name.
// Source: this package's format.
func TestParamsMismatch(t *testing.T) {
	_, all, _ := trained(t)
	data := blob(t, all, nil)
	r := rand.New(rand.NewPCG(1, 1))
	wide := NewConv2D[float32]("c1", 3, 5, 3, 1, 1, false, r)
	for _, c := range []struct {
		params []*Param[float32]
		want   string
	}{
		{append([]*Param[float32]{wide.Weight}, all[1:]...), `"c1.weight" has shape [4 3 3 3] in the blob, [5 3 3 3] in the model`},
		{all[1:], `the blob has "c1.weight", which the model lacks`},
		{append(slices.Clone(all), &Param[float32]{Name: "extra", Shape: []int{1}, W: []float32{0}}), `"extra" is not in the blob`},
	} {
		before := snapshot(c.params)
		err := ReadParams(bytes.NewReader(data), c.params, nil)
		if !errors.Is(err, ErrMismatch) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("got %v, want ErrMismatch with %q", err, c.want)
		}
		unchanged(t, "mismatch", c.params, before)
	}
}

// TestWriteParamsRefuses non-finite values and names that cannot be read
// back unambiguously. Source: this package's format.
func TestWriteParamsRefuses(t *testing.T) {
	p := &Param[float32]{Name: "w", Shape: []int{2}, W: []float32{1, float32(math.NaN())}}
	if err := WriteParams(&bytes.Buffer{}, []*Param[float32]{p}, nil); err == nil || !strings.Contains(err.Error(), `"w" element 1`) {
		t.Errorf("NaN: %v", err)
	}
	q := &Param[float32]{Name: "w", Shape: []int{1}, W: []float32{1}}
	if err := WriteParams(&bytes.Buffer{}, []*Param[float32]{q, q}, nil); err == nil {
		t.Error("duplicate names accepted")
	}
	q.Shape = []int{3}
	if err := WriteParams(&bytes.Buffer{}, []*Param[float32]{q}, nil); err == nil {
		t.Error("shape that disagrees with W accepted")
	}
}

// FuzzReadParams: arbitrary bytes give an error or a sound load, never a
// panic. Source: this package's format.
func FuzzReadParams(f *testing.F) {
	_, all := testModel(1)
	opt := NewAdam[float32](0.01)
	opt.Step(all[:2])
	var b bytes.Buffer
	if err := WriteParams(&b, all, opt); err != nil {
		f.Fatal(err)
	}
	f.Add(b.Bytes())
	f.Add(b.Bytes()[:100])
	f.Add([]byte("BWNN"))
	f.Fuzz(func(t *testing.T, data []byte) {
		_, ps := testModel(2)
		_ = ReadParams(bytes.NewReader(data), ps, NewAdam[float32](0.01))
	})
}
