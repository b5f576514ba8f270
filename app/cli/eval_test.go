package cli

import (
	"context"
	"encoding/json"
	"fmt"
	"path/filepath"
	"strings"
	"testing"

	"boxwright/project"
	"boxwright/store"
)

// padillaProject stores the worked example of Padilla, Netto & da Silva,
// "A Survey on Performance Metrics for Object-Detection Algorithms",
// IWSSIP 2020 (7 images, 15 ground-truth boxes, 24 detections, boxes as
// x y w h): the truth as annotator "truth", the detections as suggestions
// of source "det".
func padillaProject(t *testing.T) string {
	t.Helper()
	truth := [][][4]float64{
		{{25, 16, 38, 56}, {129, 123, 41, 62}},
		{{123, 11, 43, 55}, {38, 132, 59, 45}},
		{{16, 14, 35, 48}, {123, 30, 49, 44}, {99, 139, 47, 47}},
		{{53, 42, 40, 52}, {154, 43, 31, 34}},
		{{59, 31, 44, 51}, {48, 128, 34, 52}},
		{{36, 89, 52, 76}, {62, 58, 44, 67}},
		{{28, 31, 55, 63}, {58, 67, 50, 58}},
	}
	dets := [][][5]float64{
		{{.88, 5, 67, 31, 48}, {.70, 119, 111, 40, 67}, {.80, 124, 9, 49, 67}},
		{{.71, 64, 111, 64, 58}, {.54, 26, 140, 60, 47}, {.74, 19, 18, 43, 35}},
		{{.18, 109, 15, 77, 39}, {.67, 86, 63, 46, 45}, {.38, 160, 62, 36, 53}, {.91, 105, 131, 47, 47}, {.44, 18, 148, 40, 44}},
		{{.35, 83, 28, 28, 26}, {.78, 28, 68, 42, 67}, {.45, 87, 89, 25, 39}, {.14, 10, 155, 60, 26}},
		{{.62, 50, 38, 28, 46}, {.44, 95, 11, 53, 28}, {.95, 29, 131, 72, 29}, {.23, 29, 163, 72, 29}},
		{{.45, 43, 48, 74, 38}, {.84, 17, 155, 29, 35}, {.43, 95, 110, 25, 42}},
		{{.48, 16, 20, 101, 88}, {.95, 33, 116, 37, 49}},
	}
	path := filepath.Join(t.TempDir(), "padilla.boxw")
	st, err := store.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	ctx := context.Background()
	c, _ := st.AddClass(ctx, project.Class{Name: "object"})
	a, _ := st.AddAnnotator(ctx, "truth")
	var gs []project.Suggestion
	for i := range truth {
		im, err := st.AddImage(ctx, project.Image{Path: fmt.Sprintf("img%d.jpg", i+1), SHA256: strings.Repeat(string(rune('a'+i)), 64), Width: 300, Height: 300, Orientation: 1})
		if err != nil {
			t.Fatal(err)
		}
		for _, b := range truth[i] {
			if _, err := st.AddLabel(ctx, project.Label{ImageID: im.ID, ClassID: c.ID, AnnotatorID: a.ID, Box: project.Rect(b[0], b[1], b[0]+b[2], b[1]+b[3])}); err != nil {
				t.Fatal(err)
			}
		}
		for _, d := range dets[i] {
			gs = append(gs, project.Suggestion{ImageID: im.ID, ClassID: c.ID, Box: project.Rect(d[1], d[2], d[1]+d[3], d[2]+d[4]), Score: d[0]})
		}
	}
	if _, err := st.ImportSuggestions(ctx, "det", gs); err != nil {
		t.Fatal(err)
	}
	return path
}

func evalOut(t *testing.T, args ...string) map[string]any {
	t.Helper()
	out := mustCLI(t, append([]string{"eval", "--json"}, args...)...)
	var m map[string]any
	if err := json.Unmarshal([]byte(out), &m); err != nil {
		t.Fatalf("%v\n%s", err, out)
	}
	return m
}

// The published figures of Padilla et al. (2020) through the command line:
// pixel-inclusive areas, IoU 0.3, VOC-style: all-point AP 24.56 % (exactly
// 0.2456867), 11-point AP 26.84 %, precision 7/24, recall 7/15.
func TestEvalCommandReproducesPadilla2020(t *testing.T) {
	path := padillaProject(t)
	m := evalOut(t, path, "--truth", "truth", "--source", "det", "--iou", "0.3", "--plus-one", "--threshold", "0")
	nearJSON(t, "all-point AP", m["map"], 0.2456867, 5e-7)
	nearJSON(t, "precision", m["precision"], 7.0/24, 1e-12)
	nearJSON(t, "recall", m["recall"], 7.0/15, 1e-12)
	if ap := m["ap"].(map[string]any)["object"]; ap == nil {
		t.Errorf("ap by class name missing: %v", m["ap"])
	}
	m = evalOut(t, path, "--truth", "truth", "--source", "det", "--iou", "0.3", "--plus-one", "--interpolation", "11")
	nearJSON(t, "11-point AP", m["map"], 0.2684, 5e-5)
	// Continuous IoU: one detection falls just under 0.3 and 6 of 24 are
	// true positives instead of 7.
	m = evalOut(t, path, "--truth", "truth", "--source", "det", "--iou", "0.3", "--threshold", "0")
	nearJSON(t, "recall with continuous IoU", m["recall"], 6.0/15, 1e-12)
	// COCO-style figures are there too.
	m = evalOut(t, path, "--truth", "truth", "--source", "det", "--protocol", "coco")
	for _, f := range []string{"ap50", "ap75", "ap50_95", "best_f1_threshold", "curves"} {
		if _, ok := m[f]; !ok {
			t.Errorf("COCO-style output lacks %s", f)
		}
	}
	for _, bad := range [][]string{{"eval", path, "--truth", "truth"}, {"eval", path, "--truth", "nobody", "--source", "det"}, {"eval", path, "--truth", "truth", "--source", "det", "--protocol", "yolo"}, {"eval", path, "--truth", "truth", "--source", "nothing"}} {
		if code, _, _ := cli(t, bad...); code == 0 {
			t.Errorf("%v succeeded", bad)
		}
	}
}
