package store

import (
	"context"
	"path/filepath"
	"testing"

	"boxwright/assets/demo"
	"boxwright/project"
)

// BenchmarkIntake1000 adds 1,000 generated 1280×960 JPEGs (about 0.3 MB
// each) to a new project: header reading, EXIF, SHA-256 and one insert per
// image. Drawing the images is outside the timing.
func BenchmarkIntake1000(b *testing.B) {
	dir := b.TempDir()
	sc := demo.Generate(demo.Config{Seed: 11, Images: 1000})
	if _, err := sc.WriteImages(context.Background(), dir, nil); err != nil {
		b.Fatal(err)
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		b.StopTimer()
		s, err := Create(filepath.Join(b.TempDir(), "bench.boxw"))
		if err != nil {
			b.Fatal(err)
		}
		b.StartTimer()
		rep, err := s.AddImages(context.Background(), []string{dir}, project.IntakeOptions{})
		if err != nil || rep.Added != 1000 {
			b.Fatalf("intake: %+v %v", rep, err)
		}
		b.StopTimer()
		s.Close()
		b.StartTimer()
	}
	b.ReportMetric(float64(b.Elapsed().Milliseconds())/float64(b.N)/1000, "ms/image")
}
