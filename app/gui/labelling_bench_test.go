package gui

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"image"
	"image/jpeg"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"testing"
	"time"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"

	"boxwright/project"
	"boxwright/store"
)

// benchJPEGs writes n distinct 4000×3000 JPEGs (quality 90) of smooth
// gradients with grain, roughly the size of a 12-megapixel photo.
func benchJPEGs(b testing.TB, dir string, n int) {
	b.Helper()
	for i := range n {
		m := image.NewYCbCr(image.Rect(0, 0, 4000, 3000), image.YCbCrSubsampleRatio420)
		rng := rand.New(rand.NewPCG(uint64(i), 5))
		for y := range 3000 {
			row := m.Y[y*m.YStride:]
			for x := range 4000 {
				row[x] = uint8(x/16+y/12+i*37) + uint8(rng.IntN(24))
			}
		}
		for y := range 1500 {
			for x := range 2000 {
				m.Cb[y*m.CStride+x] = uint8(x/8 + i*11)
				m.Cr[y*m.CStride+x] = uint8(y/6 + i*23)
			}
		}
		f, err := os.Create(filepath.Join(dir, fmt.Sprintf("photo%02d.jpg", i)))
		if err != nil {
			b.Fatal(err)
		}
		if err := jpeg.Encode(f, m, &jpeg.Options{Quality: 90}); err != nil {
			b.Fatal(err)
		}
		if err := f.Close(); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkNextImage12MP measures "next image" on 12-megapixel JPEGs:
// from u.step(1) until the view shows the image (the decoded hook). With
// prefetch the next image was decoded in the background beforehand, as
// it is when a person spends a moment on each image; without it the step
// waits for the decode and the pyramid.
func BenchmarkNextImage12MP(b *testing.B) {
	dir := b.TempDir()
	imgDir := filepath.Join(dir, "images")
	if err := os.MkdirAll(imgDir, 0o755); err != nil {
		b.Fatal(err)
	}
	const n = 3
	benchJPEGs(b, imgDir, n)
	path := filepath.Join(dir, "bench"+store.Extension)
	st, err := store.Create(path)
	if err != nil {
		b.Fatal(err)
	}
	rep, err := st.AddImages(context.Background(), []string{imgDir}, project.IntakeOptions{})
	st.Close()
	if err != nil || rep.Added != n {
		b.Fatalf("adding the images: %+v, %v", rep, err)
	}
	for _, prefetch := range []bool{true, false} {
		name := "noprefetch"
		if prefetch {
			name = "prefetch"
		}
		b.Run(name, func(b *testing.B) { benchNextImage(b, path, prefetch) })
	}
}

func benchNextImage(b *testing.B, path string, prefetch bool) {
	u := newUI(test.NewTempApp(b))
	u.annotatorFlag = "bench"
	u.prefetch = prefetch
	shown := make(chan error, 4)
	u.decoded = func(_ int64, err error) { shown <- err }
	u.win.Resize(fyne.NewSize(1600, 1000))
	wait := func() {
		select {
		case err := <-shown:
			if err != nil {
				b.Fatal(err)
			}
		case <-time.After(60 * time.Second):
			b.Fatal("no image shown within 60 s")
		}
	}
	b.StopTimer()
	if err := u.openProject(path); err != nil {
		b.Fatal(err)
	}
	defer u.closeProject()
	wait()
	ctx := context.Background()
	for i := 0; i < b.N; i++ {
		// Untimed: start from image cur with nothing else decoded, then
		// (with prefetch) let the background decode of the next finish.
		cur := i % (len(u.images) - 1)
		u.cache.Clear()
		u.showImage(cur)
		wait()
		if prefetch {
			next := u.images[u.nav.shown[u.nav.rowOf(cur)+1]]
			if _, err := u.cache.Get(ctx, next.ID, fileOf(u.st, next)); err != nil {
				b.Fatal(err)
			}
		}
		b.StartTimer()
		u.step(1)
		wait()
		b.StopTimer()
		if u.selected != cur+1 {
			b.Fatalf("step from %d showed %d", cur, u.selected)
		}
	}
}

// BenchmarkOpenProject10000Images measures opening a project of 10,000
// images (rows only: the files are absent, as on a machine without the
// photos) with 30,000 labels by three annotators, and reports the heap in
// use afterwards (after a collection): heapB and liveB for the whole
// process, openB the growth since before the first open.
func BenchmarkOpenProject10000Images(b *testing.B) {
	ctx := context.Background()
	dir := b.TempDir()
	path := filepath.Join(dir, "big"+store.Extension)
	st, err := store.Create(path)
	if err != nil {
		b.Fatal(err)
	}
	var classes []int64
	for _, name := range []string{"boat", "buoy", "crane", "gull", "person"} {
		c, err := st.AddClass(ctx, project.Class{Name: name})
		if err != nil {
			b.Fatal(err)
		}
		classes = append(classes, c.ID)
	}
	var annotators []int64
	for _, name := range []string{"bench", "Ada", "Odile"} {
		a, err := st.AddAnnotator(ctx, name)
		if err != nil {
			b.Fatal(err)
		}
		annotators = append(annotators, a.ID)
	}
	rng := rand.New(rand.NewPCG(10000, 1))
	var labels []project.Label
	for i := range 10000 {
		sum := sha256.Sum256([]byte(fmt.Sprint("image ", i)))
		im, err := st.AddImage(ctx, project.Image{Path: fmt.Sprintf("photos/%05d.jpg", i), SHA256: hex.EncodeToString(sum[:]),
			Width: 4000, Height: 3000, Orientation: 1})
		if err != nil {
			b.Fatal(err)
		}
		for range 3 {
			x0, y0 := rng.Float64()*3500, rng.Float64()*2500
			labels = append(labels, project.Label{ImageID: im.ID, ClassID: classes[rng.IntN(len(classes))],
				AnnotatorID: annotators[rng.IntN(len(annotators))], Origin: project.OriginDrawn,
				Box: project.Box{X0: x0, Y0: y0, X1: x0 + 10 + rng.Float64()*400, Y1: y0 + 10 + rng.Float64()*400}})
		}
	}
	if err := st.AddLabels(ctx, labels); err != nil {
		b.Fatal(err)
	}
	st.Close()

	u := newUI(test.NewTempApp(b))
	u.annotatorFlag = "bench"
	shown := make(chan error, 4)
	u.decoded = func(_ int64, err error) { shown <- err }
	u.win.Resize(fyne.NewSize(1600, 1000))
	defer u.closeProject()
	var ms runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&ms)
	before := ms.HeapInuse
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if err := u.openProject(path); err != nil {
			b.Fatal(err)
		}
		b.StopTimer()
		// The first image's decode fails (no file); wait for it so the
		// next open does not race the background goroutine.
		select {
		case <-shown:
		case <-time.After(30 * time.Second):
			b.Fatal("the first image's decode did not finish")
		}
		if len(u.images) != 10000 {
			b.Fatalf("opened %d images", len(u.images))
		}
		b.StartTimer()
	}
	b.StopTimer()
	runtime.GC()
	runtime.ReadMemStats(&ms)
	b.ReportMetric(float64(ms.HeapInuse), "heapB")
	b.ReportMetric(float64(ms.HeapAlloc), "liveB")
	// What the open project holds, without whatever the process had before
	// (earlier benchmarks' windows, the test app).
	b.ReportMetric(float64(int64(ms.HeapInuse)-int64(before)), "openB")
}
