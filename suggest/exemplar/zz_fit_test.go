package exemplar

import (
	"context"
	"image"
	"math/rand/v2"
	"testing"
)

func TestZZFit(t *testing.T) {
	img, tpl := benchScene()
	small := Crop(img, image.Rect(0, 0, 1858, 1410))
	for _, tt := range [][3]int{{16, 128, 128}, {16, 256, 256}, {64, 128, 512}, {64, 256, 256}, {64, 512, 512}, {64, 1024, 1024}, {200, 1024, 1024}} {
		tp := Crop(tpl, image.Rect(0, 0, min(64, tt[0]), min(64, tt[0])))
		if tt[0] > 64 {
			tp = Crop(small, image.Rect(0, 0, tt[0], tt[0]))
		}
		M, N := tt[1], tt[2]
		d := minTime(5, func() { nccTiles(context.Background(), small, tp, methodFFT, M, N) })
		vh, vw := M-tp.H+1, N-tp.W+1
		ow, oh := small.W-tp.W+1, small.H-tp.H+1
		tiles := ((oh + vh - 1) / vh) * ((ow + vw - 1) / vw)
		pairs := (tiles + 1) / 2
		t.Logf("tpl %d tile %dx%d: %v, %d pairs, %.2f ns per sample per pair", tt[0], M, N, d, pairs, float64(d.Nanoseconds())/float64(pairs)/float64(M*N))
	}
	r := rand.New(rand.NewPCG(3, 4))
	im := randomPlane(r, 1000, 750)
	for _, s := range []int{3, 8, 16} {
		tp := randomPlane(r, s, s)
		d := minTime(5, func() { nccWith(im, tp, methodDirect) })
		taps := float64((1000 - s + 1) * (750 - s + 1) * s * s)
		t.Logf("direct %d: %v, %.3f ns per tap", s, d, float64(d.Nanoseconds())/taps)
	}
}
