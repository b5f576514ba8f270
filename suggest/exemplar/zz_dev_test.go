package exemplar

import (
	"context"
	"image"
	"testing"
	"time"
)

func minTime(n int, f func()) time.Duration {
	best := time.Duration(1 << 62)
	for range n {
		t0 := time.Now()
		f()
		best = min(best, time.Since(t0))
	}
	return best
}

func TestZZDev(t *testing.T) {
	img, tpl := benchScene()
	j := newNCCJob(context.Background(), img, tpl)
	var ns nccNormState
	t.Logf("normalise 449x449: %v", minTime(30, func() { j.normalise(&ns, 0, 449, 0, 449) }))
	rows, cols := newFFTPlan[float64](512), newFFTPlan[float64](512)
	re, im := make([]float64, 512*520), make([]float64, 512*520)
	for i := range re {
		re[i] = float64(img.Pix[i])
	}
	t.Logf("rows fwd: %v", minTime(30, func() {
		for r := 0; r < 512; r++ {
			rows.forward1(re[r*512:(r+1)*512], im[r*512:(r+1)*512])
		}
	}))
	for _, L := range []int{16, 32, 64, 128, 512} {
		t.Logf("cols fwd L=%d: %v", L, minTime(30, func() {
			for c := 0; c < 512; c += L {
				cols.forwardLanes(re[c:], im[c:], 520, L)
			}
		}))
	}
	t.Logf("rows inv: %v", minTime(30, func() {
		for r := 0; r < 512; r++ {
			rows.inverse1(re[r*512:(r+1)*512], im[r*512:(r+1)*512])
		}
	}))
	t.Logf("cols inv L=64: %v", minTime(30, func() {
		for c := 0; c < 512; c += 64 {
			cols.inverseLanes(re[c:], im[c:], 520, 64)
		}
	}))
	small := Crop(img, image.Rect(0, 0, 1858, 1410)) // 16 tiles of 512
	t.Logf("NCC 1858x1410: %v", minTime(15, func() { NCC(small, tpl) }))
	t.Logf("whole NCC (GOMAXPROCS=%d): %v", nccWorkers(99), minTime(5, func() { NCC(img, tpl) }))
}
