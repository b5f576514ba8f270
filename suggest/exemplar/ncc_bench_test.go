package exemplar

import (
	"encoding/binary"
	"fmt"
	"image"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"
)

// benchScene is the 12 MP comparison input: 4000×3000 uniform noise
// 0..255 (seed 1, 2) and the 64×64 template cut at (1000, 1000).
func benchScene() (Plane, Plane) {
	r := rand.New(rand.NewPCG(1, 2))
	img := randomPlane(r, 4000, 3000)
	return img, Crop(img, image.Rect(1000, 1000, 1064, 1064))
}

// writeRaw writes p as little-endian float32, the layout numpy.fromfile reads.
func writeRaw(path string, p Plane) error {
	buf := make([]byte, 4*len(p.Pix))
	for i, v := range p.Pix {
		binary.LittleEndian.PutUint32(buf[4*i:], math.Float32bits(v))
	}
	return os.WriteFile(path, buf, 0o644)
}

// BenchmarkNCC12MPOneScale is the exhaustive full-resolution map: a 64×64
// template over a 4000×3000 gray plane. With BENCH_DATA=dir it also writes
// dir/image.f32 (4000×3000) and dir/template.f32 (64×64) for
// compare_ncc.py --mode one-scale.
func BenchmarkNCC12MPOneScale(b *testing.B) {
	img, tpl := benchScene()
	if dir := os.Getenv("BENCH_DATA"); dir != "" {
		if err := writeRaw(filepath.Join(dir, "image.f32"), img); err != nil {
			b.Fatal(err)
		}
		if err := writeRaw(filepath.Join(dir, "template.f32"), tpl); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		if _, err := NCC(img, tpl); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkNCCPaths times both correlation paths on a few sizes; the cost
// model's constants in ncc.go come from these figures.
func BenchmarkNCCPaths(b *testing.B) {
	r := rand.New(rand.NewPCG(3, 4))
	for _, sz := range [][4]int{{1000, 750, 3, 3}, {1000, 750, 8, 8}, {1000, 750, 16, 16}, {1000, 750, 32, 32}, {1000, 750, 64, 64}} {
		img := randomPlane(r, sz[0], sz[1])
		tpl := randomPlane(r, sz[2], sz[3])
		for _, m := range []struct {
			name string
			m    nccMethod
		}{{"direct", methodDirect}, {"fft", methodFFT}} {
			b.Run(fmt.Sprintf("%dx%d_t%dx%d_%s", sz[0], sz[1], sz[2], sz[3], m.name), func(b *testing.B) {
				for b.Loop() {
					nccWith(img, tpl, m.m)
				}
			})
		}
	}
}
