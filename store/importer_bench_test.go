package store

import (
	"bytes"
	"context"
	"fmt"
	"path/filepath"
	"runtime"
	"testing"

	"boxwright/project"
	"boxwright/project/formats"
)

// BenchmarkImportCornerJSON200k reads a corner/size JSON with 10,000 images
// and 200,000 boxes and imports it into a project that holds the images:
// parse, match, clip and one transaction of inserts. Building the file and
// the project is outside the timing.
func BenchmarkImportCornerJSON200k(b *testing.B) {
	ctx := context.Background()
	classes := []string{"sailboat", "motorboat", "buoy", "kayak"}
	ds := &formats.Dataset{Classes: classes}
	var images []project.Image
	for i := 0; i < 10000; i++ {
		name := fmt.Sprintf("img/%05d.jpg", i)
		images = append(images, project.Image{Path: name, SHA256: fmt.Sprintf("%064x", i+1), Width: 1280, Height: 960, Orientation: 1})
		rec := formats.ImageRecord{Name: name, Width: 1280, Height: 960}
		for k := 0; k < 20; k++ {
			x, y := float64((i*37+k*53)%1200), float64((i*11+k*29)%900)
			rec.Boxes = append(rec.Boxes, formats.BoxRecord{Class: classes[k%4], Box: project.Box{X0: x, Y0: y, X1: x + 40.5, Y1: y + 30.25}})
		}
		ds.Images = append(ds.Images, rec)
	}
	var file bytes.Buffer
	if err := formats.WriteCornerJSON(&file, ds); err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	var peak uint64
	for i := 0; i < b.N; i++ {
		b.StopTimer()
		s, err := Create(filepath.Join(b.TempDir(), "bench.boxw"))
		if err != nil {
			b.Fatal(err)
		}
		tx, _ := s.db.Begin()
		for _, im := range images {
			tx.Exec("INSERT INTO images(path, sha256, width, height, orientation, status, added_at) VALUES (?,?,?,?,1,'new','2026-01-01T00:00:00Z')",
				im.Path, im.SHA256, im.Width, im.Height)
		}
		tx.Commit()
		runtime.GC()
		b.StartTimer()
		got, err := formats.ReadCornerJSON(bytes.NewReader(file.Bytes()), "bench.json")
		if err != nil {
			b.Fatal(err)
		}
		rep, err := s.ImportDataset(ctx, got, project.ImportOptions{Annotator: "bench", CreateClasses: true})
		if err != nil || rep.Labels != 200000 {
			b.Fatalf("import: %d labels, %v", rep.Labels, err)
		}
		b.StopTimer()
		var ms runtime.MemStats
		runtime.ReadMemStats(&ms)
		peak = max(peak, ms.HeapSys)
		s.Close()
		b.StartTimer()
	}
	b.ReportMetric(float64(peak)/(1<<20), "MiB-heap-sys")
	b.ReportMetric(float64(file.Len())/(1<<20), "MiB-file")
}
