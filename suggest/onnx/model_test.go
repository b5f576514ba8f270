package onnx

import (
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"image"
	"image/color"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"boxwright/project"
	"boxwright/suggest/onnx/onnxtest"
)

const python = onnxtest.Python

func testRuntime(t *testing.T) string {
	t.Helper()
	p := onnxtest.Runtime(t)
	if _, err := LoadRuntime(p); err != nil {
		t.Fatal(err)
	}
	return p
}

func testModels(t *testing.T) (string, []onnxtest.Model) { return onnxtest.Models(t) }

func TestMain(m *testing.M) {
	code := m.Run()
	onnxtest.Cleanup()
	os.Exit(code)
}

// testPicture is an image with some structure for the nets to respond to.
func testPicture(w, h int) image.Image {
	img := image.NewRGBA(image.Rect(0, 0, w, h))
	for y := range h {
		for x := range w {
			v := uint8((x*7 + y*3) % 256)
			if (x/9+y/7)%2 == 0 {
				v = 255 - v
			}
			img.Set(x, y, color.RGBA{v, uint8(x * 255 / w), uint8(y * 255 / h), 255})
		}
	}
	return img
}

type refOutput struct {
	Outputs map[string]struct {
		Shape []int64   `json:"shape"`
		Data  []float64 `json:"data"`
	} `json:"outputs"`
	Detections []struct {
		Class int        `json:"class"`
		Score float64    `json:"score"`
		Box   [4]float64 `json:"box"`
	} `json:"detections"`
}

// reference runs testdata/reference.py: OpenCV's dnn on the same input
// tensor, and an independent decoding in numpy.
func reference(t *testing.T, m *Model, x []float32, lb Letterbox) refOutput {
	t.Helper()
	dir := t.TempDir()
	raw := make([]byte, 4*len(x))
	for i, v := range x {
		binary.LittleEndian.PutUint32(raw[4*i:], math.Float32bits(v))
	}
	in := filepath.Join(dir, "input.f32")
	if err := os.WriteFile(in, raw, 0o644); err != nil {
		t.Fatal(err)
	}
	sx, sy := lb.Scale()
	spec := map[string]any{"model": m.Path, "input": in, "height": m.Desc.Input.Height, "width": m.Desc.Input.Width,
		"layout": m.Desc.Output.Layout, "tensors": m.outputs, "num_classes": len(m.Classes), "min_score": m.Desc.MinScore,
		"nms_iou": m.Desc.NMSIoU, "max_candidates": m.Desc.MaxCandidates, "max_detections": m.Desc.MaxDetections, "multi_label": m.Desc.Output.MultiLabel,
		"letterbox": map[string]any{"scale_x": sx, "scale_y": sy, "pad_x": lb.Left, "pad_y": lb.Top, "image_width": lb.ImageW, "image_height": lb.ImageH}}
	b, _ := json.Marshal(spec)
	sp := filepath.Join(dir, "spec.json")
	os.WriteFile(sp, b, 0o644)
	cmd := exec.Command(python, "testdata/reference.py", sp)
	var stderr strings.Builder
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("reference.py: %v\n%s", err, stderr.String())
	}
	var r refOutput
	if err := json.Unmarshal(out, &r); err != nil {
		t.Fatal(err)
	}
	return r
}

// Every test detector, one per output layout (and the transposed one),
// run by ONNX Runtime through Boxwright's pre-processing, decoding,
// letterbox and NMS, against OpenCV 4.6's dnn module (a runtime outside
// this project) on the same input tensor and testdata/reference.py's
// numpy decoding: raw outputs within 1e-5 (relative above 1: boxes of a
// hundred pixels differ in float32's last bits), every detection found by both,
// boxes within 1e-3 px and scores within 1e-5 (the tolerances),
// on a landscape and a portrait image of odd sizes.
func TestModelsAgainstOpenCV(t *testing.T) {
	lib := testRuntime(t)
	dir, list := testModels(t)
	names := []string{"rover", "crate", "beacon"}
	pictures := map[string]image.Image{"landscape 151×77": testPicture(151, 77), "portrait 61×133": testPicture(61, 133)}
	ran := 0
	for _, bm := range list {
		if bm.Layout == "bad" {
			continue
		}
		for _, multi := range []bool{false, true} {
			d := Description{Output: Output{MultiLabel: multi}, NMSIoU: 0.45}.Defaults()
			opt := OpenOptions{Desc: &d, Runtime: lib}
			if bm.Names == nil {
				opt.Names, opt.NamesFile = names, "(the test's names)"
			}
			if bm.Layout == LayoutDetections {
				d.NMSIoU = -1 // already suppressed
			}
			m, err := Open(filepath.Join(dir, bm.File), opt)
			if err != nil {
				t.Fatalf("%s: %v", bm.File, err)
			}
			if m.Desc.Output.Layout != bm.Layout || fmt.Sprint(m.Desc.Input.Width) != fmt.Sprint(bm.Width) || fmt.Sprint(m.Desc.Input.Height) != fmt.Sprint(bm.Height) {
				t.Errorf("%s: detected layout %s, input %d×%d; the file is %s, %d×%d", bm.File, m.Desc.Output.Layout, m.Desc.Input.Width, m.Desc.Input.Height, bm.Layout, bm.Width, bm.Height)
			}
			if bm.Names != nil && (m.ClassesFrom == "" || strings.Join(m.Classes, ",") != strings.Join(bm.Names, ",")) {
				t.Errorf("%s: classes %v from %s, want %v from the metadata", bm.File, m.Classes, m.ClassesFrom, bm.Names)
			}
			for what, pic := range pictures {
				x, lb := m.Prepare(pic)
				outs, err := m.Infer(x)
				if err != nil {
					t.Fatal(err)
				}
				cs, err := m.Candidates(outs, lb)
				if err != nil {
					t.Fatal(err)
				}
				got := Finish(cs, lb, m.Desc.NMSIoU, m.Desc.MaxCandidates, m.Desc.MaxDetections)
				ref := reference(t, m, x, lb)
				for _, o := range outs {
					r := ref.Outputs[o.Name]
					if len(r.Data) != len(o.Data) {
						t.Fatalf("%s %s: output %s has %d values, OpenCV %d", bm.File, what, o.Name, len(o.Data), len(r.Data))
					}
					worst := 0.0
					for i := range o.Data {
						worst = math.Max(worst, math.Abs(float64(o.Data[i])-r.Data[i])/math.Max(1, math.Abs(r.Data[i])))
					}
					if worst > 1e-5 {
						t.Errorf("%s %s: output %s differs from OpenCV's by up to %g (relative above 1)", bm.File, what, o.Name, worst)
					}
				}
				if len(got) != len(ref.Detections) || len(got) == 0 {
					t.Errorf("%s %s multi=%v: %d detections, the reference %d", bm.File, what, multi, len(got), len(ref.Detections))
					continue
				}
				for i, g := range got {
					r := ref.Detections[i]
					db := math.Max(math.Max(math.Abs(g.Box.X0-r.Box[0]), math.Abs(g.Box.Y0-r.Box[1])), math.Max(math.Abs(g.Box.X1-r.Box[2]), math.Abs(g.Box.Y1-r.Box[3])))
					if g.Class != r.Class || math.Abs(g.Score-r.Score) > 1e-5 || db > 1e-3 {
						t.Errorf("%s %s multi=%v, detection %d: %+v, the reference %+v", bm.File, what, multi, i, g, r)
						break
					}
				}
				ran++
			}
			m.Close()
		}
	}
	if ran < 20 {
		t.Errorf("only %d comparisons ran", ran)
	}
}

// Models that cannot be fed or read are refused at Open with what is
// wrong and what to do; a names file must match the classes the outputs
// have; a file that is not ONNX is said to be so (without the runtime).
func TestBadModelsRefused(t *testing.T) {
	lib := testRuntime(t)
	dir, _ := testModels(t)
	names := []string{"rover", "crate", "beacon"}
	open := func(file string, opt OpenOptions) error {
		opt.Runtime = lib
		if opt.Names == nil {
			opt.Names, opt.NamesFile = names, "names.txt"
		}
		m, err := Open(filepath.Join(dir, file), opt)
		if err == nil {
			m.Close()
		}
		return err
	}
	cases := []struct {
		file string
		opt  OpenOptions
		want string
	}{
		{"rank3_input.onnx", OpenOptions{}, "rank 3; this program feeds one image as batch × channels × height × width"},
		{"int_input.onnx", OpenOptions{}, "its elements are uint8; this program feeds float32"},
		{"dynamic_input.onnx", OpenOptions{}, "its height and width are left open; give the input size (--input WxH"},
		{"no_layout.onnx", OpenOptions{}, "the outputs output0 [1×7×5×5] fit no output layout (detections: wants N × 6"},
		{"centre_scores.onnx", OpenOptions{Names: []string{"a", "b", "c", "d"}, NamesFile: "four.txt"}, "fit no output layout"},
		{"centre_scores.onnx", OpenOptions{Names: []string{"a", "b", "c", "d"}, NamesFile: "four.txt", Desc: &Description{Output: Output{Layout: LayoutCentreScores}}},
			"names file four.txt names 4 classes, but its outputs (output0 [1×384×7]) read as layout centre-scores have 3"},
		{"corners_scores.onnx", OpenOptions{Names: []string{"a", "b"}, NamesFile: "two.txt"}, "names file two.txt names 2 classes, but its outputs (boxes [1×384×4], scores [1×384×3]) read as layout corners-scores have 3"},
		{"detections.onnx", OpenOptions{Desc: &Description{Output: Output{Layout: LayoutCentreScores}}}, "names file names.txt names 3 classes, but its outputs (dets [1×24×6]) read as layout centre-scores have 2"},
	}
	for _, c := range cases {
		err := open(c.file, c.opt)
		if err == nil || !strings.Contains(err.Error(), c.want) || !errors.Is(err, project.ErrInvalid) {
			t.Errorf("%s: %v\nwant: %s", c.file, err, c.want)
		}
	}
	// The open input runs once its size is given.
	d := Description{Input: Input{Width: 96, Height: 64}}.Defaults()
	if err := open("dynamic_input.onnx", OpenOptions{Desc: &d}); err != nil {
		t.Errorf("dynamic input with a size: %v", err)
	}
	d = Description{Input: Input{Width: 50, Height: 50}}.Defaults()
	if err := open("centre_scores.onnx", OpenOptions{Desc: &d}); err == nil || !strings.Contains(err.Error(), "the model takes 96×64, but 50×50 was given") {
		t.Errorf("a size the model does not take: %v", err)
	}
	// Without names anywhere.
	if _, err := Open(filepath.Join(dir, "corners_scores_ids.onnx"), OpenOptions{Runtime: lib}); err == nil || !strings.Contains(err.Error(), "names no classes in its metadata: give a names file") {
		t.Errorf("no names: %v", err)
	}
	// Not ONNX at all.
	junk := filepath.Join(t.TempDir(), "notes.onnx")
	os.WriteFile(junk, []byte("these are my notes, not a model\n"), 0o644)
	if _, _, err := ReadGraph(junk); err == nil || !strings.Contains(err.Error(), "not an ONNX model") {
		t.Errorf("a text file: %v", err)
	}
	empty := filepath.Join(t.TempDir(), "empty.onnx")
	os.WriteFile(empty, nil, 0o644)
	if _, _, err := ReadGraph(empty); err == nil || !strings.Contains(err.Error(), "not an ONNX model") {
		t.Errorf("an empty file: %v", err)
	}
}

// A names file: one per line, blank and repeated lines refused by line.
func TestReadNames(t *testing.T) {
	dir := t.TempDir()
	write := func(s string) string {
		p := filepath.Join(dir, fmt.Sprint(len(s), ".txt"))
		os.WriteFile(p, []byte(s), 0o644)
		return p
	}
	if got, err := ReadNames(write("rover\r\ncrate\nbeacon\n\n")); err != nil || strings.Join(got, ",") != "rover,crate,beacon" {
		t.Errorf("%q %v", got, err)
	}
	for s, want := range map[string]string{"rover\n\ncrate\n": "line 2: empty", "rover\ncrate\nrover\n": "line 3: \"rover\" repeats line 1", "": "line 1: empty"} {
		if _, err := ReadNames(write(s)); err == nil || !strings.Contains(err.Error(), want) {
			t.Errorf("%q: %v, want %q", s, err, want)
		}
	}
}

// A library that is missing or is not ONNX Runtime is refused with where
// to get one (in a child process: a process loads one runtime).
func TestRuntimeMissingOrIncompatible(t *testing.T) {
	if lib := os.Getenv("BOXWRIGHT_TEST_RUNTIME_CHILD"); lib != "" {
		_, err := LoadRuntime(lib)
		fmt.Println(err)
		return
	}
	for lib, want := range map[string]string{
		"/nonexistent/libonnxruntime.so.1": "no such file or directory; ONNX Runtime is a separate shared library",
		"/lib/x86_64-linux-gnu/libm.so.6":  "is not a usable ONNX Runtime library (this program needs C API version 24, ONNX Runtime 1.24 or later)",
		"/etc/hostname":                    "could not be loaded",
	} {
		if _, err := os.Stat(filepath.Dir(lib)); err != nil && !strings.HasPrefix(lib, "/nonexistent") {
			continue
		}
		cmd := exec.Command(os.Args[0], "-test.run=^TestRuntimeMissingOrIncompatible$")
		cmd.Env = append(os.Environ(), "BOXWRIGHT_TEST_RUNTIME_CHILD="+lib)
		out, _ := cmd.CombinedOutput()
		if !strings.Contains(string(out), want) || !strings.Contains(string(out), "make onnxruntime") {
			t.Errorf("%s: %s\nwant: %s", lib, out, want)
		}
	}
}
