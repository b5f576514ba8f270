package ops

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"testing"
	"time"

	"boxwright/app/backend"
	"boxwright/assets/demo"
	"boxwright/suggest/detector"
	"boxwright/suggest/detector/onnxexport"
	"boxwright/suggest/onnx"
	"boxwright/suggest/onnx/onnxtest"
)

// BenchmarkModelOnDemo runs Boxwright's detector, exported as ONNX, on
// the demo's 1280×960 images through ONNX Runtime: "inference" is the
// runtime alone on a prepared input; "path" is the whole run of
// RunModel (decode the JPEG, letterbox, inference, decoding, NMS, store
// as pending suggestions), per image. The path's overhead beyond inference
// is path/inference − 1 (reported as overhead-%), with the runtime on
// every core and on one.
func BenchmarkModelOnDemo(b *testing.B) {
	lib := onnxtest.Runtime(b)
	if _, err := onnx.LoadRuntime(lib); err != nil {
		b.Fatal(err)
	}
	ctx := context.Background()
	dir := b.TempDir()
	if err := MakeDemo(ctx, dir, demo.Config{Seed: 1, Images: 8}, nil); err != nil {
		b.Fatal(err)
	}
	st, err := backend.Open(filepath.Join(dir, DemoProjectName))
	if err != nil {
		b.Fatal(err)
	}
	defer st.Close()
	// An untrained network costs what a trained one does; its uniform
	// heat gives the store a full load of boxes at a low minimum score.
	m := &detector.Model{Net: detector.NewNet(len(demo.Classes), 1), Classes: demo.Classes, InputSize: 512}
	w, h := onnxexport.Frame(m, demo.DefaultWidth, demo.DefaultHeight)
	data, err := onnxexport.Export(m, "bench", w, h)
	if err != nil {
		b.Fatal(err)
	}
	file := filepath.Join(dir, "bench.onnx")
	os.WriteFile(file, data, 0o644)
	d := onnxexport.Describe(m, w, h)
	d.MinScore = 0.05
	ims, err := st.Images(ctx)
	if err != nil {
		b.Fatal(err)
	}
	img, err := DecodeProjectImage(st, ims[0])
	if err != nil {
		b.Fatal(err)
	}
	// threads=0: the runtime on every core; threads=1: one core left to
	// the reading, letterboxing and decoding beside it.
	for _, threads := range []int{0, 1} {
		om, err := onnx.Open(file, onnx.OpenOptions{Desc: &d, Threads: threads})
		if err != nil {
			b.Fatal(err)
		}
		x, _ := om.Prepare(img)
		var inference time.Duration
		b.Run(fmt.Sprintf("threads=%d/inference", threads), func(b *testing.B) {
			start := time.Now()
			for b.Loop() {
				if _, err := om.Infer(x); err != nil {
					b.Fatal(err)
				}
			}
			inference = time.Since(start) / time.Duration(b.N)
			b.ReportMetric(float64(inference.Microseconds())/1000, "ms/image")
		})
		b.Run(fmt.Sprintf("threads=%d/path", threads), func(b *testing.B) {
			start := time.Now()
			for b.Loop() {
				rep, err := RunModel(ctx, st, ModelRunJob{Model: om, Images: ims, Save: true})
				if err != nil || len(rep.Detections) == 0 {
					b.Fatal(rep, err)
				}
			}
			per := time.Since(start) / time.Duration(b.N*len(ims))
			b.ReportMetric(float64(per.Microseconds())/1000, "ms/image")
			if inference > 0 {
				b.ReportMetric(100*(float64(per)/float64(inference)-1), "overhead-%")
			}
		})
		om.Close()
	}
}
