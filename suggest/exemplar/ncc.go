// Package exemplar finds objects like a drawn example by normalised
// cross-correlation.
package exemplar

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/bits"
	"runtime"
	"sync"
	"sync/atomic"
	"unsafe"
)

// nccMethod selects how Σ T'·I is computed; tests force each one.
type nccMethod int

const (
	methodAuto nccMethod = iota
	methodDirect
	methodFFT
)

// NCC is the zero-mean normalised cross-correlation map of template t slid
// over image p, as OpenCV's TM_CCOEFF_NORMED defines it:
//
//	out(x,y) = Σ T'·I' / sqrt(Σ T'² · Σ I'²)
//
// with T' = T − mean(T) and I' = I − mean of the image window under the
// template. out is (p.W−t.W+1)×(p.H−t.H+1) and its values lie in [−1, 1];
// where the window or the template has zero variance the value is 0, never
// NaN. Window sums and sums of squares are float64 running sums; Σ T'·I
// comes from a direct sum or a tiled float64 FFT cross-correlation
// (fft.go), whichever chooseMethod estimates cheaper. It returns an error
// when t is empty or larger than p.
func NCC(p, t Plane) (Plane, error) { return nccTiles(context.Background(), p, t, methodAuto, 0, 0) }

// NCCPlanes sums the per-channel NCC maps of several planes and divides by
// their number (colour matching). ps[i] is matched with ts[i].
func NCCPlanes(ps, ts []Plane) (Plane, error) { return nccPlanes(context.Background(), ps, ts) }

// nccPlanes is NCCPlanes that stops, returning ctx's error, soon after ctx
// is cancelled: it looks at ctx between output rows (direct sums) or tiles
// (FFT).
func nccPlanes(ctx context.Context, ps, ts []Plane) (Plane, error) {
	if len(ps) == 0 || len(ps) != len(ts) {
		return Plane{}, fmt.Errorf("exemplar: %d image planes for %d template planes", len(ps), len(ts))
	}
	var sum Plane
	for i := range ps {
		m, err := nccTiles(ctx, ps[i], ts[i], methodAuto, 0, 0)
		if err != nil {
			if ctx.Err() != nil {
				return Plane{}, err
			}
			return Plane{}, fmt.Errorf("exemplar: channel %d: %w", i, err)
		}
		if i == 0 {
			sum = m
			continue
		}
		if m.W != sum.W || m.H != sum.H {
			return Plane{}, fmt.Errorf("exemplar: channel %d map is %d×%d, channel 0 is %d×%d", i, m.W, m.H, sum.W, sum.H)
		}
		for j, v := range m.Pix {
			sum.Pix[j] += v
		}
	}
	if len(ps) > 1 {
		k := float32(len(ps))
		for j := range sum.Pix {
			sum.Pix[j] /= k
		}
	}
	return sum, nil
}

// errEmptyTemplate is returned for a template without samples.
var errEmptyTemplate = errors.New("exemplar: empty template")

// nccWith is NCC with the correlation method fixed.
func nccWith(p, t Plane, m nccMethod) (Plane, error) {
	return nccTiles(context.Background(), p, t, m, 0, 0)
}

// nccTiles is nccWith with the FFT tile size fixed to tm×tn (rows×columns)
// unless those are 0, so tests can reach many tile edges on small images.
// A cancelled ctx stops it with ctx's error.
func nccTiles(ctx context.Context, p, t Plane, m nccMethod, tm, tn int) (Plane, error) {
	if !p.valid() || !t.valid() {
		return Plane{}, fmt.Errorf("exemplar: plane size does not match its samples (image %d×%d/%d, template %d×%d/%d)",
			p.W, p.H, len(p.Pix), t.W, t.H, len(t.Pix))
	}
	if t.Empty() {
		return Plane{}, errEmptyTemplate
	}
	if t.W > p.W || t.H > p.H {
		return Plane{}, fmt.Errorf("exemplar: template %d×%d is larger than image %d×%d", t.W, t.H, p.W, p.H)
	}
	if err := ctx.Err(); err != nil {
		return Plane{}, err
	}
	j := newNCCJob(ctx, p, t)
	if j.tVar <= 0 {
		return j.out, nil // a flat template matches nothing
	}
	if m == methodAuto {
		m = chooseMethod(p.W, p.H, t.W, t.H)
	}
	if m == methodFFT {
		if tm < t.H || tn < t.W {
			tm, tn, _ = planTiles(p.W, p.H, t.W, t.H)
		}
		// The FFT takes powers of two.
		tm, tn = 1<<bits.Len(uint(tm-1)), 1<<bits.Len(uint(tn-1))
		j.runFFT(tm, tn)
	} else {
		j.runDirect()
	}
	if err := j.stopped(); err != nil {
		return Plane{}, err
	}
	return j.out, nil
}

// nccJob holds one NCC computation.
type nccJob struct {
	ctx    context.Context
	stop   atomic.Bool // set once a worker saw ctx cancelled
	p, t   Plane
	ow, oh int
	tz     []float64 // template minus its mean
	tVar   float64   // Σ T'²
	offset float64   // subtracted from the samples to keep the sums small
	out    Plane
}

func newNCCJob(ctx context.Context, p, t Plane) *nccJob {
	j := &nccJob{ctx: ctx, p: p, t: t, ow: p.W - t.W + 1, oh: p.H - t.H + 1}
	j.out = NewPlane(j.ow, j.oh)
	n := float64(len(t.Pix))
	var s float64
	for _, v := range t.Pix {
		s += float64(v)
	}
	mean := s / n
	j.tz = make([]float64, len(t.Pix))
	var s2, raw2 float64
	for i, v := range t.Pix {
		d := float64(v) - mean
		j.tz[i] = d
		s2 += d * d
		raw2 += float64(v) * float64(v)
	}
	// Rounding leaves a flat template with a tiny non-zero Σ T'².
	if s2 <= 1e-12*raw2 {
		s2 = 0
	}
	j.tVar = s2
	// Any constant would do (Σ T' = 0); one near the image mean keeps the
	// sums small. The mean of about 256 evenly spaced rows is near enough
	// and costs a fraction of the whole image's (10 ms at 12 MP, serial).
	var ps float64
	var n0 int
	for y := 0; y < p.H; y += max(1, p.H/256) {
		for _, v := range p.Pix[y*p.W : (y+1)*p.W] {
			ps += float64(v)
		}
		n0 += p.W
	}
	j.offset = ps / float64(n0)
	return j
}

// cancelled reports whether the job should stop: ctx is looked at between
// rows and tiles, often enough that a cancel takes effect within a few
// milliseconds, and the answer is remembered for the other workers.
func (j *nccJob) cancelled() bool {
	if j.stop.Load() {
		return true
	}
	if j.ctx.Err() != nil {
		j.stop.Store(true)
		return true
	}
	return false
}

// stopped returns ctx's error when the job was cancelled.
func (j *nccJob) stopped() error {
	if j.stop.Load() {
		if err := j.ctx.Err(); err != nil {
			return err
		}
		return context.Canceled
	}
	return nil
}

// nccWorkers returns how many goroutines share n pieces of work.
func nccWorkers(n int) int {
	return max(1, min(n, runtime.GOMAXPROCS(0)))
}

// nccParallel runs f(i) for i in [0,n) on a few goroutines, each with its own
// state from newState, until stop reports true.
func nccParallel[S any](n int, stop func() bool, newState func() S, f func(s S, i int)) {
	var next atomic.Int64
	var wg sync.WaitGroup
	for w := nccWorkers(n); w > 0; w-- {
		wg.Add(1)
		go func() {
			defer wg.Done()
			s := newState()
			for {
				i := int(next.Add(1) - 1)
				if i >= n || stop() {
					return
				}
				f(s, i)
			}
		}()
	}
	wg.Wait()
}

// nccNormState is the scratch space of normalise.
type nccNormState struct {
	c1, c2, p1, p2 []float64
}

// normalise turns the numerators Σ T'·I already in out over output rows
// [y0,y1) and columns [x0,x1) into NCC scores. The window sums and sums of
// squares (float64, of the samples less the image mean, so they stay
// small) slide down the region: per-column sums over the template's
// height, updated by one row in and one row out, and their prefix sums
// along the row give every window of an output row. All of it stays in a
// core's L1 cache, where integral images of a 512×512 tile did not.
func (j *nccJob) normalise(st *nccNormState, x0, x1, y0, y1 int) {
	tw, th := j.t.W, j.t.H
	rw := x1 - x0 + tw - 1
	if cap(st.c1) < rw+1 {
		st.c1, st.c2 = make([]float64, rw+1), make([]float64, rw+1)
		st.p1, st.p2 = make([]float64, rw+1), make([]float64, rw+1)
	}
	c1, c2, p1, p2 := st.c1[:rw], st.c2[:rw], st.p1[:rw+1], st.p2[:rw+1]
	clear(c1)
	clear(c2)
	row := func(y int) []float32 { return j.p.Pix[y*j.p.W+x0 : y*j.p.W+x0+rw] }
	off := j.offset
	for y := y0; y < y0+th; y++ {
		r := row(y)
		r = r[:len(c1)]
		for x := range c1 {
			d := float64(r[x]) - off
			c1[x] += d
			c2[x] += d * d
		}
	}
	invN := 1 / float64(tw*th)
	var passed float64 // Σ over the rows so far of the band's Σ d²
	for y := y0; y < y1; y++ {
		// Slide the column sums down a row (not for the first) and take
		// their prefix sums, in one pass.
		var s1, s2 float64
		p1[0], p2[0] = 0, 0
		q1, q2 := p1[1:len(c1)+1], p2[1:len(c1)+1]
		if y > y0 {
			in, out := row(y+th-1), row(y-1)
			in, out = in[:len(c1)], out[:len(c1)]
			for x := range c1 {
				a, b := float64(in[x])-off, float64(out[x])-off
				u1 := c1[x] + (a - b)
				u2 := c2[x] + (a*a - b*b)
				c1[x], c2[x] = u1, u2
				s1 += u1
				s2 += u2
				q1[x], q2[x] = s1, s2
			}
		} else {
			for x := range c1 {
				s1 += c1[x]
				s2 += c2[x]
				q1[x], q2[x] = s1, s2
			}
		}
		// Rounding in the running sums is a few ulps of what passed
		// through them (each row th times); a window whose variance is
		// below that is flat.
		passed += s2
		eps := 1e-12 * passed / float64(th)
		dst := j.out.Pix[y*j.ow+x0 : y*j.ow+x1]
		a1, a2 := p1[:len(dst)], p2[:len(dst)]
		b1, b2 := p1[tw:tw+len(dst)], p2[tw:tw+len(dst)]
		for x := range dst {
			w1 := b1[x] - a1[x]
			w2 := b2[x] - a2[x]
			v := w2 - w1*w1*invN
			if v <= eps+1e-9*w2 {
				dst[x] = 0
				continue
			}
			// The score is stored as float32: its square root and
			// quotient in float32 are as exact as the result (SQRTSS
			// and DIVSS, a third the latency of the float64 ones).
			q := v * j.tVar
			if q > math.MaxFloat32 {
				dst[x] = float32(max(-1, min(1, float64(dst[x])/math.Sqrt(q))))
				continue
			}
			r := dst[x] / float32(math.Sqrt(float64(float32(q))))
			if r > 1 {
				r = 1
			} else if r < -1 {
				r = -1
			}
			dst[x] = r
		}
	}
}

// directBand is the number of output rows one direct-sum task covers.
const directBand = 32

// runDirect sums Σ T'·I at every position, one band of output rows per task.
func (j *nccJob) runDirect() {
	tw, th := j.t.W, j.t.H
	bands := (j.oh + directBand - 1) / directBand
	type state struct {
		acc []float64
		ns  nccNormState
	}
	nccParallel(bands, j.cancelled, func() *state { return &state{acc: make([]float64, j.ow)} }, func(s *state, b int) {
		y0, y1 := b*directBand, min(j.oh, (b+1)*directBand)
		for y := y0; y < y1; y++ {
			if j.cancelled() {
				return
			}
			acc := s.acc
			clear(acc)
			for ty := 0; ty < th; ty++ {
				base := (y + ty) * j.p.W
				tr := j.tz[ty*tw : (ty+1)*tw]
				i := 0
				// Four taps per pass over acc halve its loads and stores.
				for ; i+4 <= tw; i += 4 {
					c0, c1, c2, c3 := tr[i], tr[i+1], tr[i+2], tr[i+3]
					r0 := j.p.Pix[base+i : base+i+j.ow]
					r1 := j.p.Pix[base+i+1 : base+i+1+j.ow]
					r2 := j.p.Pix[base+i+2 : base+i+2+j.ow]
					r3 := j.p.Pix[base+i+3 : base+i+3+j.ow]
					for x := range acc {
						acc[x] += c0*float64(r0[x]) + c1*float64(r1[x]) + c2*float64(r2[x]) + c3*float64(r3[x])
					}
				}
				for ; i < tw; i++ {
					c := tr[i]
					r := j.p.Pix[base+i : base+i+j.ow]
					for x := range acc {
						acc[x] += c * float64(r[x])
					}
				}
			}
			row := j.out.Pix[y*j.ow : (y+1)*j.ow]
			for x, v := range acc {
				row[x] = float32(v)
			}
		}
		j.normalise(&s.ns, 0, j.ow, y0, y1)
	})
}

// Cost model, in nanoseconds on one core (fitted to BenchmarkNCCPaths and
// tile-size sweeps on a 2-core x86-64 server, Go 1.26, with the FFT of
// fft.go):
//
//	direct: costDirect · outW·outH·tw·th   (one multiply-add per tap)
//	FFT:    per M×N tile, costFFT · M·N·log2(M·N) for its half of the
//	        forward and inverse transform of a tile pair plus costTile · M·N
//	        for the copies, the spectrum product and the tile's
//	        normalisation; tiles of (M−th+1)×(N−tw+1) outputs cover the
//	        map, they go through the transforms two at a time, and with W
//	        workers the wall time is ⌈pairs/W⌉ pairs, so one huge tile is
//	        a bad plan.
//
// Tiles above maxTileArea samples cost half as much again per sample
// (their column strips no longer fit a core's L2 cache); a large template
// needs them, since a tile of its own size or little more leaves only a
// few valid outputs per tile. The direct path's window sums are the same
// work on both sides and do not enter the choice.
const (
	costDirect  = 0.45
	costFFT     = 0.9
	costTile    = 4.0
	maxTileArea = 1 << 20
	// costOutOfCache multiplies the cost of a tile above maxTileArea.
	costOutOfCache = 1.5
)

// chooseMethod picks the cheaper way to compute Σ T'·I.
func chooseMethod(w, h, tw, th int) nccMethod {
	ow, oh := w-tw+1, h-th+1
	direct := costDirect * float64(ow) * float64(oh) * float64(tw*th) / float64(nccWorkers(oh))
	_, _, fft := planTiles(w, h, tw, th)
	if fft < direct {
		return methodFFT
	}
	return methodDirect
}

// maxTile bounds one side of an FFT tile unless the template needs more.
const maxTile = 1024

// fftSizes lists the powers of two up to maxTile, the lengths the FFT
// handles.
var fftSizes = func() []int {
	var s []int
	for n := 1; n <= maxTile; n *= 2 {
		s = append(s, n)
	}
	return s
}()

// maxTileSamples bounds a tile unless no smaller one fits the template:
// each worker holds two arrays of 8 bytes per sample.
const maxTileSamples = 1 << 24

// planTiles picks the FFT tile size M×N (rows×columns) for a w×h image and a
// tw×th template by the cost model, returning the size and its cost.
func planTiles(w, h, tw, th int) (m, n int, cost float64) {
	ow, oh := w-tw+1, h-th+1
	cands := func(t, full int) []int {
		var c []int
		for _, s := range fftSizes {
			if s >= t {
				c = append(c, s)
				if s >= full {
					break // one tile already covers the axis
				}
			}
		}
		if len(c) == 0 || c[len(c)-1] < full {
			// Beyond maxTile: one tile the length of the axis, rounded up
			// to a power of two, so a long template does not get a tile
			// with a single valid output per row.
			c = append(c, 1<<bits.Len(uint(full-1)))
		}
		return c
	}
	type plan struct {
		m, n int
		cost float64
	}
	best, big := plan{cost: math.Inf(1)}, plan{cost: math.Inf(1)}
	for _, mm := range cands(th, h) {
		ty := (oh + mm - th) / (mm - th + 1)
		for _, nn := range cands(tw, w) {
			tx := (ow + nn - tw) / (nn - tw + 1)
			area := float64(mm) * float64(nn)
			pairs := (ty*tx + 1) / 2
			w := nccWorkers(pairs)
			rounds := (pairs + w - 1) / w
			c := 2 * float64(rounds) * area * (costFFT*math.Log2(area) + costTile)
			if mm*nn > maxTileArea {
				c *= costOutOfCache
			}
			p := &best
			if mm*nn > maxTileSamples {
				p = &big
			}
			if c < p.cost {
				*p = plan{mm, nn, c}
			}
		}
	}
	if math.IsInf(best.cost, 1) {
		best = big
	}
	return best.m, best.n, best.cost
}

// fftLanes is the width, in columns, of the strips the column transforms
// work on: a strip of a 512-row tile (two arrays of 512×64 float64) stays
// in a core's L2 cache through all the stages.
const fftLanes = 64

// nccFFTState is one worker's tile pair: two real tiles held as the real
// and imaginary parts of one complex tile.
type nccFFTState[F fftFloat] struct {
	re, im []F
	ns     nccNormState
}

// runFFT computes Σ T'·I by FFT cross-correlation in M×N tiles
// (overlap-save) of power-of-two sides: the template spectrum is computed
// once, and each tile's circular correlation is exact for its first
// (M−th+1)×(N−tw+1) outputs. Tiles go two at a time through one complex
// transform, one as the real part and one as the imaginary part: the
// template is real, so the correlation of each comes back in its own part
// (the product with the conjugate template spectrum is linear, and the
// inverse of a real tile's product is real).
func (j *nccJob) runFFT(M, N int) { runFFTTyped[float64](j, M, N) }

func runFFTTyped[F fftFloat](j *nccJob, M, N int) {
	tw, th := j.t.W, j.t.H
	vh, vw := M-th+1, N-tw+1
	ty, tx := (j.oh+vh-1)/vh, (j.ow+vw-1)/vw
	rows, cols := newFFTPlan[F](N), newFFTPlan[F](M)
	lanes := min(N, fftLanes)
	// Row stride: a power-of-two stride would put a column strip's rows
	// in a few cache sets; one cache line more spreads them.
	ld := N + 64/int(unsafe.Sizeof(F(0)))
	// Template spectrum, conjugated (correlation, not convolution) and
	// scaled by 1/(M·N) to undo the unnormalised inverse.
	tr, ti := make([]F, M*ld), make([]F, M*ld)
	for r := 0; r < th; r++ {
		for c := 0; c < tw; c++ {
			tr[r*ld+c] = F(j.tz[r*tw+c])
		}
	}
	for r := 0; r < th; r++ { // the rows below are zero
		rows.forward1(tr[r*ld:r*ld+N], ti[r*ld:r*ld+N])
	}
	for c := 0; c < N; c += lanes {
		cols.forwardLanes(tr[c:], ti[c:], ld, lanes)
	}
	scale := 1 / (F(M) * F(N))
	for i := range tr {
		tr[i], ti[i] = tr[i]*scale, -ti[i]*scale
	}

	tiles := ty * tx
	newState := func() *nccFFTState[F] {
		return &nccFFTState[F]{re: make([]F, M*ld), im: make([]F, M*ld)}
	}
	off := F(j.offset)
	// load puts row r of a tile, less the image mean, into dst.
	load := func(dst []F, tile, r int) {
		oy, ox := (tile/tx)*vh, (tile%tx)*vw
		y := oy + r
		if tile >= tiles || y >= j.p.H {
			clear(dst)
			return
		}
		xe := min(j.p.W, ox+N)
		src := j.p.Pix[y*j.p.W+ox : y*j.p.W+xe]
		for x, v := range src {
			dst[x] = F(v) - off
		}
		clear(dst[len(src):])
	}
	store := func(src []F, tile int, s *nccFFTState[F]) {
		if tile >= tiles {
			return
		}
		oy, ox := (tile/tx)*vh, (tile%tx)*vw
		yn, xn := min(vh, j.oh-oy), min(vw, j.ow-ox)
		for r := 0; r < yn; r++ {
			dst := j.out.Pix[(oy+r)*j.ow+ox : (oy+r)*j.ow+ox+xn]
			row := src[r*ld : r*ld+xn]
			for x := range dst {
				dst[x] = float32(row[x])
			}
		}
		j.normalise(&s.ns, ox, ox+xn, oy, oy+yn)
	}

	nccParallel((tiles+1)/2, j.cancelled, newState, func(s *nccFFTState[F], pair int) {
		a, b := 2*pair, 2*pair+1
		// Each row is transformed as soon as it is loaded, while it is in
		// cache. A tile can be large when the template is: ctx is looked
		// at every four rows and every column strip.
		for r := 0; r < M; r++ {
			if r%4 == 0 && j.cancelled() {
				return
			}
			re, im := s.re[r*ld:r*ld+N], s.im[r*ld:r*ld+N]
			load(re, a, r)
			load(im, b, r)
			rows.forward1(re, im)
		}
		// Each strip of columns goes through its forward transform, the
		// product with the template spectrum and its inverse while it
		// stays in cache.
		for c := 0; c < N; c += lanes {
			if j.cancelled() {
				return
			}
			cols.forwardLanes(s.re[c:], s.im[c:], ld, lanes)
			for r := 0; r < M; r++ {
				o := r*ld + c
				xr, xi := s.re[o:o+lanes], s.im[o:o+lanes]
				yr, yi := tr[o:o+lanes], ti[o:o+lanes]
				xi, yr, yi = xi[:len(xr)], yr[:len(xr)], yi[:len(xr)]
				for i := range xr {
					pr, pi := xr[i], xi[i]
					xr[i], xi[i] = pr*yr[i]-pi*yi[i], pr*yi[i]+pi*yr[i]
				}
			}
			cols.inverseLanes(s.re[c:], s.im[c:], ld, lanes)
		}
		// Only the rows that hold valid outputs need their inverse.
		for r := 0; r < vh; r++ {
			if r%4 == 0 && j.cancelled() {
				return
			}
			rows.inverse1(s.re[r*ld:r*ld+N], s.im[r*ld:r*ld+N])
		}
		store(s.re, a, s)
		store(s.im, b, s)
	})
}
