package agree

import (
	"math/rand/v2"
	"testing"

	"boxwright/project"
)

// reportBenchImages makes images with n annotators' boxes: each object seen by
// every annotator with jitter, some missed, some classes swapped.
func reportBenchImages(images, n, boxes int) []ImageLabels {
	rng := rand.New(rand.NewPCG(1, 2))
	out := make([]ImageLabels, images)
	for i := range out {
		im := ImageLabels{ImageID: int64(i + 1), By: make([]Labels, n)}
		for k := 0; k < boxes; k++ {
			x, y := rng.Float64()*1200, rng.Float64()*900
			w, h := 20+rng.Float64()*80, 20+rng.Float64()*80
			cls := int64(1 + rng.IntN(4))
			for a := 0; a < n; a++ {
				if rng.Float64() < 0.05 {
					continue // missed
				}
				j := func() float64 { return rng.NormFloat64() * 2 }
				c := cls
				if rng.Float64() < 0.03 {
					c = int64(1 + rng.IntN(4))
				}
				im.By[a].Boxes = append(im.By[a].Boxes, project.Rect(x+j(), y+j(), x+w+j(), y+h+j()))
				im.By[a].Classes = append(im.By[a].Classes, c)
			}
		}
		out[i] = im
	}
	return out
}

func benchmarkCompare(b *testing.B, n int) {
	ims := reportBenchImages(10000, n, 20)
	b.ResetTimer()
	for range b.N {
		if _, err := Compare(ims, n, Options{}, nil); err != nil {
			b.Fatal(err)
		}
	}
}

// The full report for 10,000 images × 20 boxes: pairs, objects, kappa,
// Fleiss (when complete) and alpha.
func BenchmarkCompare10000Images2Annotators(b *testing.B) { benchmarkCompare(b, 2) }
func BenchmarkCompare10000Images5Annotators(b *testing.B) { benchmarkCompare(b, 5) }
