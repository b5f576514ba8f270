package store

import (
	"context"
	"fmt"
	"path/filepath"
	"runtime"
	"testing"

	"boxwright/project"
)

// BenchmarkImportSuggestions1M imports 1,000,000 suggestions over 10,000
// images (100 each, four classes) into a fresh project per iteration; making
// the project and its image rows is outside the timing.
func BenchmarkImportSuggestions1M(b *testing.B) {
	ctx := context.Background()
	const images, perImage = 10000, 100
	gs := make([]project.Suggestion, 0, images*perImage)
	for i := 0; i < images; i++ {
		for k := 0; k < perImage; k++ {
			x, y := float64((i*37+k*53)%1200), float64((i*11+k*29)%900)
			gs = append(gs, project.Suggestion{ImageID: int64(i + 1), ClassID: int64(k%4 + 1),
				Box:   project.Box{X0: x, Y0: y, X1: x + 40.5, Y1: y + 30.25},
				Score: float64((i*7919+k*104729)%1000) / 1000})
		}
	}
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		b.StopTimer()
		s, err := Create(filepath.Join(b.TempDir(), "bench.boxw"))
		if err != nil {
			b.Fatal(err)
		}
		for _, name := range []string{"sailboat", "motorboat", "buoy", "kayak"} {
			if _, err := s.AddClass(ctx, project.Class{Name: name}); err != nil {
				b.Fatal(err)
			}
		}
		tx, _ := s.db.Begin()
		for n := 0; n < images; n++ {
			if _, err := tx.Exec("INSERT INTO images(id, path, sha256, width, height, orientation, status, added_at) VALUES (?,?,?,1280,960,1,'new','2026-01-01T00:00:00Z')",
				n+1, fmt.Sprintf("img/%05d.jpg", n), fmt.Sprintf("%064x", n+1)); err != nil {
				b.Fatal(err)
			}
		}
		if err := tx.Commit(); err != nil {
			b.Fatal(err)
		}
		runtime.GC()
		b.StartTimer()
		rep, err := s.ImportSuggestions(ctx, "detector-v7", gs)
		if err != nil || rep.Added != len(gs) {
			b.Fatalf("import: %+v, %v", rep, err)
		}
		b.StopTimer()
		s.Close()
		b.StartTimer()
	}
}
