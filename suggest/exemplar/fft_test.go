package exemplar

import (
	"context"
	"image"
	"math"
	"math/bits"
	"math/rand/v2"
	"testing"
)

// naiveDFT is the definition X_k = Σ_j x_j·exp(−2πi·jk/n) (Van Loan,
// Computational Frameworks for the FFT, SIAM 1992, eq. 1.1.2), in float64.
func naiveDFT(re, im []float64) ([]float64, []float64) {
	n := len(re)
	xr, xi := make([]float64, n), make([]float64, n)
	for k := range n {
		for j := range n {
			a := -2 * math.Pi * float64((j*k)%n) / float64(n)
			c, s := math.Cos(a), math.Sin(a)
			xr[k] += re[j]*c - im[j]*s
			xi[k] += re[j]*s + im[j]*c
		}
	}
	return xr, xi
}

// bitrev reverses the low lg bits of k.
func bitrev(k, lg int) int {
	if lg == 0 {
		return 0
	}
	return int(bits.Reverse(uint(k)) >> (bits.UintSize - lg))
}

// TestFFTAgainstDFT: forward1 and forwardLanes give the DFT in bit-reversed
// order (decimation in frequency, Van Loan §1.9), for odd and even log2 n;
// the inverses return n times the input.
func TestFFTAgainstDFT(t *testing.T) {
	r := rand.New(rand.NewPCG(5, 6))
	for _, n := range []int{1, 2, 4, 8, 16, 32, 128, 512} {
		lg := bits.TrailingZeros(uint(n))
		p := newFFTPlan[float64](n)
		const L, stride = 3, 5
		re, im := make([]float64, n), make([]float64, n)
		lr, li := make([]float64, n*stride), make([]float64, n*stride)
		for i := range re {
			re[i], im[i] = r.Float64()*2-1, r.Float64()*2-1
			for l := range L {
				lr[i*stride+l], li[i*stride+l] = re[i]*float64(l+1), im[i]*float64(l+1)
			}
		}
		wr, wi := naiveDFT(re, im)
		gr, gi := append([]float64(nil), re...), append([]float64(nil), im...)
		p.forward1(gr, gi)
		p.forwardLanes(lr, li, stride, L)
		for k := range n {
			b := bitrev(k, lg)
			if math.Abs(gr[b]-wr[k]) > 1e-9 || math.Abs(gi[b]-wi[k]) > 1e-9 {
				t.Fatalf("n=%d k=%d: forward1 %v%+vi, DFT %v%+vi", n, k, gr[b], gi[b], wr[k], wi[k])
			}
			for l := range L {
				f := float64(l + 1)
				if math.Abs(lr[b*stride+l]-f*wr[k]) > 1e-9 || math.Abs(li[b*stride+l]-f*wi[k]) > 1e-9 {
					t.Fatalf("n=%d k=%d lane %d: forwardLanes %v%+vi, DFT %v%+vi", n, k, l, lr[b*stride+l], li[b*stride+l], f*wr[k], f*wi[k])
				}
			}
		}
		p.inverse1(gr, gi)
		p.inverseLanes(lr, li, stride, L)
		for i := range n {
			if math.Abs(gr[i]/float64(n)-re[i]) > 1e-12 || math.Abs(gi[i]/float64(n)-im[i]) > 1e-12 {
				t.Fatalf("n=%d: inverse1 at %d: %v, want %v", n, i, gr[i]/float64(n), re[i])
			}
			for l := range L {
				f := float64(l+1) * float64(n)
				if math.Abs(lr[i*stride+l]/f-re[i]) > 1e-12 || math.Abs(li[i*stride+l]/f-im[i]) > 1e-12 {
					t.Fatalf("n=%d lane %d: inverseLanes at %d: %v, want %v", n, l, i, lr[i*stride+l]/f, re[i])
				}
			}
		}
	}
}

// TestNCCFFTFaintNextToBright: windows of a faint texture (±0.05 levels)
// beside bright noise (0..255) share FFT tiles with it; the tiled FFT's
// scores there must still equal the direct sums' (float64 throughout)
// within 1e-5. A float32 transform fails this: its rounding is relative to
// the whole tile's energy, thousands of times a faint window's.
func TestNCCFFTFaintNextToBright(t *testing.T) {
	r := rand.New(rand.NewPCG(31, 32))
	img := randomPlane(r, 600, 300)
	for y := range 300 {
		for x := 300; x < 600; x++ {
			img.Pix[y*600+x] = 128 + 0.1*(r.Float32()-0.5)
		}
	}
	tpl := Crop(img, image.Rect(400, 100, 432, 132))
	want, err := nccWith(img, tpl, methodDirect)
	if err != nil {
		t.Fatal(err)
	}
	for _, tile := range []int{64, 256} {
		got, err := nccTiles(context.Background(), img, tpl, methodFFT, tile, tile)
		if err != nil {
			t.Fatal(err)
		}
		var worst float64
		for i := range want.Pix {
			d := math.Abs(float64(got.Pix[i] - want.Pix[i]))
			worst = max(worst, d)
			if d > 1e-5 {
				t.Fatalf("tile %d at (%d,%d): FFT %v, direct %v", tile, i%want.W, i/want.W, got.Pix[i], want.Pix[i])
			}
		}
		t.Logf("tile %d: worst |Δ| %.2g", tile, worst)
	}
}
