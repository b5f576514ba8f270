package exemplar

import (
	"math"
	"math/bits"
)

// A power-of-two complex FFT on split real/imaginary arrays, written for
// the tiled correlation of runFFT and nothing else:
//
//   - forward is decimation in frequency (Gentleman–Sande): natural order
//     in, bit-reversed order out; the inverse is decimation in time
//     (Cooley–Tukey): bit-reversed in, natural out, unnormalised (it
//     returns n times the input). A correlation multiplies two spectra
//     point by point, which does not care about their order, so no
//     bit-reversal permutation is ever done.
//   - stages are radix 4 (two radix-2 stages fused, three complex
//     multiplies per four points instead of four), with one radix-2 stage
//     when log2 n is odd.
//   - a transform runs either along one contiguous sequence (fft1) or along
//     a batch of sequences interleaved with a stride (fftLanes), where each
//     "point" is a run of lanes adjacent in memory: the column transforms
//     of a row-major tile, whose inner loop then walks memory in order.
//
// Van Loan, Computational Frameworks for the Fast Fourier Transform (SIAM
// 1992), §1.4 and §1.9 give the two factorizations and their transposes.

// fftFloat is the sample type of a transform.
type fftFloat interface{ ~float32 | ~float64 }

// fftStage is one stage of a plan: a radix-4 (or radix-2) butterfly over
// blocks of size s, with the twiddles w^j, w^2j, w^3j for j < s/4
// (w = exp(−2πi/s)), or w^j for j < s/2 in a radix-2 stage.
type fftStage[F fftFloat] struct {
	s                            int
	radix2                       bool
	w1r, w1i, w2r, w2i, w3r, w3i []F
}

// fftPlan is the stages of a length-n transform in forward order (block
// size decreasing); the inverse runs them in reverse order.
type fftPlan[F fftFloat] struct {
	n      int
	stages []fftStage[F]
}

func newFFTPlan[F fftFloat](n int) *fftPlan[F] {
	if n < 1 || n&(n-1) != 0 {
		panic("exemplar: FFT length is not a power of two")
	}
	p := &fftPlan[F]{n: n}
	lg := bits.TrailingZeros(uint(n))
	s := n
	tw := func(s, j, k int) (F, F) {
		a := -2 * math.Pi * float64(j*k) / float64(s)
		return F(math.Cos(a)), F(math.Sin(a))
	}
	if lg%2 == 1 {
		st := fftStage[F]{s: s, radix2: true}
		for j := 0; j < s/2; j++ {
			r, i := tw(s, j, 1)
			st.w1r, st.w1i = append(st.w1r, r), append(st.w1i, i)
		}
		p.stages = append(p.stages, st)
		s /= 2
	}
	for ; s >= 4; s /= 4 {
		st := fftStage[F]{s: s}
		for j := 0; j < s/4; j++ {
			r, i := tw(s, j, 1)
			st.w1r, st.w1i = append(st.w1r, r), append(st.w1i, i)
			r, i = tw(s, j, 2)
			st.w2r, st.w2i = append(st.w2r, r), append(st.w2i, i)
			r, i = tw(s, j, 3)
			st.w3r, st.w3i = append(st.w3r, r), append(st.w3i, i)
		}
		p.stages = append(p.stages, st)
	}
	return p
}

// forward1 transforms the contiguous sequence re+i·im (length n) in place,
// output in bit-reversed order.
func (p *fftPlan[F]) forward1(re, im []F) {
	re, im = re[:p.n], im[:p.n]
	for si := range p.stages {
		st := &p.stages[si]
		s := st.s
		if st.radix2 {
			h := s / 2
			wr, wi := st.w1r[:h], st.w1i[:h]
			for g := 0; g < p.n; g += s {
				ar, ai := re[g:g+h], im[g:g+h]
				br, bi := re[g+h:g+s], im[g+h:g+s]
				br, bi, ai = br[:len(ar)], bi[:len(ar)], ai[:len(ar)]
				for j := range ar {
					xr, xi := ar[j], ai[j]
					yr, yi := br[j], bi[j]
					ar[j], ai[j] = xr+yr, xi+yi
					dr, di := xr-yr, xi-yi
					br[j], bi[j] = dr*wr[j]-di*wi[j], dr*wi[j]+di*wr[j]
				}
			}
			continue
		}
		if s == 4 {
			for g := 0; g+4 <= p.n; g += 4 {
				r, i := re[g:g+4], im[g:g+4]
				t0r, t0i := r[0]+r[2], i[0]+i[2]
				t1r, t1i := r[0]-r[2], i[0]-i[2]
				t2r, t2i := r[1]+r[3], i[1]+i[3]
				t3r, t3i := r[1]-r[3], i[1]-i[3]
				r[0], i[0] = t0r+t2r, t0i+t2i
				r[1], i[1] = t0r-t2r, t0i-t2i
				r[2], i[2] = t1r+t3i, t1i-t3r
				r[3], i[3] = t1r-t3i, t1i+t3r
			}
			continue
		}
		q := s / 4
		w1r, w1i := st.w1r[:q], st.w1i[:q]
		w2r, w2i := st.w2r[:q], st.w2i[:q]
		w3r, w3i := st.w3r[:q], st.w3i[:q]
		for g := 0; g < p.n; g += s {
			r0, i0 := re[g:g+q], im[g:g+q]
			r1, i1 := re[g+q:g+2*q], im[g+q:g+2*q]
			r2, i2 := re[g+2*q:g+3*q], im[g+2*q:g+3*q]
			r3, i3 := re[g+3*q:g+4*q], im[g+3*q:g+4*q]
			for j := range r0 {
				a0r, a0i := r0[j], i0[j]
				a1r, a1i := r1[j], i1[j]
				a2r, a2i := r2[j], i2[j]
				a3r, a3i := r3[j], i3[j]
				t0r, t0i := a0r+a2r, a0i+a2i
				t1r, t1i := a0r-a2r, a0i-a2i
				t2r, t2i := a1r+a3r, a1i+a3i
				t3r, t3i := a1r-a3r, a1i-a3i
				r0[j], i0[j] = t0r+t2r, t0i+t2i
				ur, ui := t0r-t2r, t0i-t2i
				r1[j], i1[j] = ur*w2r[j]-ui*w2i[j], ur*w2i[j]+ui*w2r[j]
				ur, ui = t1r+t3i, t1i-t3r
				r2[j], i2[j] = ur*w1r[j]-ui*w1i[j], ur*w1i[j]+ui*w1r[j]
				ur, ui = t1r-t3i, t1i+t3r
				r3[j], i3[j] = ur*w3r[j]-ui*w3i[j], ur*w3i[j]+ui*w3r[j]
			}
		}
	}
}

// inverse1 undoes forward1 up to a factor n: bit-reversed order in,
// natural order out.
func (p *fftPlan[F]) inverse1(re, im []F) {
	re, im = re[:p.n], im[:p.n]
	for si := len(p.stages) - 1; si >= 0; si-- {
		st := &p.stages[si]
		s := st.s
		if st.radix2 {
			h := s / 2
			wr, wi := st.w1r[:h], st.w1i[:h]
			for g := 0; g < p.n; g += s {
				ar, ai := re[g:g+h], im[g:g+h]
				br, bi := re[g+h:g+s], im[g+h:g+s]
				br, bi, ai = br[:len(ar)], bi[:len(ar)], ai[:len(ar)]
				for j := range ar {
					xr, xi := ar[j], ai[j]
					yr, yi := br[j]*wr[j]+bi[j]*wi[j], bi[j]*wr[j]-br[j]*wi[j]
					ar[j], ai[j] = xr+yr, xi+yi
					br[j], bi[j] = xr-yr, xi-yi
				}
			}
			continue
		}
		if s == 4 {
			for g := 0; g+4 <= p.n; g += 4 {
				r, i := re[g:g+4], im[g:g+4]
				sr, si := r[0]+r[1], i[0]+i[1]
				tr, ti := r[0]-r[1], i[0]-i[1]
				ur, ui := r[2]+r[3], i[2]+i[3]
				vr, vi := r[2]-r[3], i[2]-i[3]
				r[0], i[0] = sr+ur, si+ui
				r[2], i[2] = sr-ur, si-ui
				r[1], i[1] = tr-vi, ti+vr
				r[3], i[3] = tr+vi, ti-vr
			}
			continue
		}
		q := s / 4
		w1r, w1i := st.w1r[:q], st.w1i[:q]
		w2r, w2i := st.w2r[:q], st.w2i[:q]
		w3r, w3i := st.w3r[:q], st.w3i[:q]
		for g := 0; g < p.n; g += s {
			r0, i0 := re[g:g+q], im[g:g+q]
			r1, i1 := re[g+q:g+2*q], im[g+q:g+2*q]
			r2, i2 := re[g+2*q:g+3*q], im[g+2*q:g+3*q]
			r3, i3 := re[g+3*q:g+4*q], im[g+3*q:g+4*q]
			for j := range r0 {
				c0r, c0i := r0[j], i0[j]
				// c·conj(w)
				d1r, d1i := r1[j]*w2r[j]+i1[j]*w2i[j], i1[j]*w2r[j]-r1[j]*w2i[j]
				d2r, d2i := r2[j]*w1r[j]+i2[j]*w1i[j], i2[j]*w1r[j]-r2[j]*w1i[j]
				d3r, d3i := r3[j]*w3r[j]+i3[j]*w3i[j], i3[j]*w3r[j]-r3[j]*w3i[j]
				sr, si := c0r+d1r, c0i+d1i
				tr, ti := c0r-d1r, c0i-d1i
				ur, ui := d2r+d3r, d2i+d3i
				vr, vi := d2r-d3r, d2i-d3i
				r0[j], i0[j] = sr+ur, si+ui
				r2[j], i2[j] = sr-ur, si-ui
				r1[j], i1[j] = tr-vi, ti+vr
				r3[j], i3[j] = tr+vi, ti-vr
			}
		}
	}
}

// forwardLanes transforms L interleaved sequences in place: point k of
// sequence l is re[k*stride+l] (l < L ≤ stride). Output in bit-reversed
// order along k.
func (p *fftPlan[F]) forwardLanes(re, im []F, stride, L int) {
	row := func(k int) ([]F, []F) { return re[k*stride : k*stride+L], im[k*stride : k*stride+L] }
	for si := range p.stages {
		st := &p.stages[si]
		s := st.s
		if st.radix2 {
			h := s / 2
			for g := 0; g < p.n; g += s {
				for j := 0; j < h; j++ {
					wr, wi := st.w1r[j], st.w1i[j]
					ar, ai := row(g + j)
					br, bi := row(g + j + h)
					br, bi, ai = br[:len(ar)], bi[:len(ar)], ai[:len(ar)]
					for l := range ar {
						xr, xi := ar[l], ai[l]
						yr, yi := br[l], bi[l]
						ar[l], ai[l] = xr+yr, xi+yi
						dr, di := xr-yr, xi-yi
						br[l], bi[l] = dr*wr-di*wi, dr*wi+di*wr
					}
				}
			}
			continue
		}
		q := s / 4
		for g := 0; g < p.n; g += s {
			for j := 0; j < q; j++ {
				r0, i0 := row(g + j)
				r1, i1 := row(g + j + q)
				r2, i2 := row(g + j + 2*q)
				r3, i3 := row(g + j + 3*q)
				i0, r1, i1, r2, i2, r3, i3 = i0[:len(r0)], r1[:len(r0)], i1[:len(r0)], r2[:len(r0)], i2[:len(r0)], r3[:len(r0)], i3[:len(r0)]
				if j == 0 {
					for l := range r0 {
						t0r, t0i := r0[l]+r2[l], i0[l]+i2[l]
						t1r, t1i := r0[l]-r2[l], i0[l]-i2[l]
						t2r, t2i := r1[l]+r3[l], i1[l]+i3[l]
						t3r, t3i := r1[l]-r3[l], i1[l]-i3[l]
						r0[l], i0[l] = t0r+t2r, t0i+t2i
						r1[l], i1[l] = t0r-t2r, t0i-t2i
						r2[l], i2[l] = t1r+t3i, t1i-t3r
						r3[l], i3[l] = t1r-t3i, t1i+t3r
					}
					continue
				}
				w1r, w1i := st.w1r[j], st.w1i[j]
				w2r, w2i := st.w2r[j], st.w2i[j]
				w3r, w3i := st.w3r[j], st.w3i[j]
				for l := range r0 {
					t0r, t0i := r0[l]+r2[l], i0[l]+i2[l]
					t1r, t1i := r0[l]-r2[l], i0[l]-i2[l]
					t2r, t2i := r1[l]+r3[l], i1[l]+i3[l]
					t3r, t3i := r1[l]-r3[l], i1[l]-i3[l]
					r0[l], i0[l] = t0r+t2r, t0i+t2i
					ur, ui := t0r-t2r, t0i-t2i
					r1[l], i1[l] = ur*w2r-ui*w2i, ur*w2i+ui*w2r
					ur, ui = t1r+t3i, t1i-t3r
					r2[l], i2[l] = ur*w1r-ui*w1i, ur*w1i+ui*w1r
					ur, ui = t1r-t3i, t1i+t3r
					r3[l], i3[l] = ur*w3r-ui*w3i, ur*w3i+ui*w3r
				}
			}
		}
	}
}

// inverseLanes undoes forwardLanes up to a factor n.
func (p *fftPlan[F]) inverseLanes(re, im []F, stride, L int) {
	row := func(k int) ([]F, []F) { return re[k*stride : k*stride+L], im[k*stride : k*stride+L] }
	for si := len(p.stages) - 1; si >= 0; si-- {
		st := &p.stages[si]
		s := st.s
		if st.radix2 {
			h := s / 2
			for g := 0; g < p.n; g += s {
				for j := 0; j < h; j++ {
					wr, wi := st.w1r[j], st.w1i[j]
					ar, ai := row(g + j)
					br, bi := row(g + j + h)
					br, bi, ai = br[:len(ar)], bi[:len(ar)], ai[:len(ar)]
					for l := range ar {
						xr, xi := ar[l], ai[l]
						yr, yi := br[l]*wr+bi[l]*wi, bi[l]*wr-br[l]*wi
						ar[l], ai[l] = xr+yr, xi+yi
						br[l], bi[l] = xr-yr, xi-yi
					}
				}
			}
			continue
		}
		q := s / 4
		for g := 0; g < p.n; g += s {
			for j := 0; j < q; j++ {
				r0, i0 := row(g + j)
				r1, i1 := row(g + j + q)
				r2, i2 := row(g + j + 2*q)
				r3, i3 := row(g + j + 3*q)
				i0, r1, i1, r2, i2, r3, i3 = i0[:len(r0)], r1[:len(r0)], i1[:len(r0)], r2[:len(r0)], i2[:len(r0)], r3[:len(r0)], i3[:len(r0)]
				if j == 0 {
					for l := range r0 {
						sr, si := r0[l]+r1[l], i0[l]+i1[l]
						tr, ti := r0[l]-r1[l], i0[l]-i1[l]
						ur, ui := r2[l]+r3[l], i2[l]+i3[l]
						vr, vi := r2[l]-r3[l], i2[l]-i3[l]
						r0[l], i0[l] = sr+ur, si+ui
						r2[l], i2[l] = sr-ur, si-ui
						r1[l], i1[l] = tr-vi, ti+vr
						r3[l], i3[l] = tr+vi, ti-vr
					}
					continue
				}
				w1r, w1i := st.w1r[j], st.w1i[j]
				w2r, w2i := st.w2r[j], st.w2i[j]
				w3r, w3i := st.w3r[j], st.w3i[j]
				for l := range r0 {
					c0r, c0i := r0[l], i0[l]
					d1r, d1i := r1[l]*w2r+i1[l]*w2i, i1[l]*w2r-r1[l]*w2i
					d2r, d2i := r2[l]*w1r+i2[l]*w1i, i2[l]*w1r-r2[l]*w1i
					d3r, d3i := r3[l]*w3r+i3[l]*w3i, i3[l]*w3r-r3[l]*w3i
					sr, si := c0r+d1r, c0i+d1i
					tr, ti := c0r-d1r, c0i-d1i
					ur, ui := d2r+d3r, d2i+d3i
					vr, vi := d2r-d3r, d2i-d3i
					r0[l], i0[l] = sr+ur, si+ui
					r2[l], i2[l] = sr-ur, si-ui
					r1[l], i1[l] = tr-vi, ti+vr
					r3[l], i3[l] = tr+vi, ti-vr
				}
			}
		}
	}
}
