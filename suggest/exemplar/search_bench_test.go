package exemplar

import (
	"context"
	"math/rand/v2"
	"slices"
	"testing"
	"time"

	"boxwright/project"
)

// BenchmarkSearch12MP5Scales: a 4000×3000 gray texture (seed 11) with a
// 64×64 patch (seed 12) planted at five places, the first as the exemplar,
// default five scales, coarse to fine. Reports the median time per search
// beside the mean.
func BenchmarkSearch12MP5Scales(b *testing.B) {
	img := texture(4000, 3000, 11)
	patch := texture(64, 64, 12)
	rng := rand.New(rand.NewPCG(13, 13))
	at := [][2]int{{100, 100}, {1500, 700}, {3201, 2403}, {777, 1999}, {2600, 333}}
	for _, p := range at {
		plant(img, patch, p[0], p[1], 1, 0, 5, rng)
	}
	ex := []project.Box{box(100, 100, 64, 64)}
	ctx := context.Background()
	var times []time.Duration
	var found int
	b.ResetTimer()
	for b.Loop() {
		t0 := time.Now()
		ms, err := Search(ctx, img, ex, Options{})
		if err != nil {
			b.Fatal(err)
		}
		times = append(times, time.Since(t0))
		found = len(ms)
	}
	slices.Sort(times)
	b.ReportMetric(float64(times[len(times)/2].Microseconds())/1000, "ms-median")
	b.ReportMetric(float64(found), "matches")
}
