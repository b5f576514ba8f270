package onnx

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"strings"

	"boxwright/project"
)

// DescriptionFormat is the first line of defence against reading some
// other JSON file as a model description.
const DescriptionFormat = "boxwright-model-description/1"

// Description says how to feed a model and read its outputs: what a model
// file does not say about itself, written once and kept beside the model
// (DescriptionPath) so that a model is described once. Every field has a
// default; zero values mean "from the model" or the default.
type Description struct {
	Format string `json:"format"`
	// Input is how an image becomes the model's input tensor.
	Input Input `json:"input"`
	// Output is how the model's outputs become boxes.
	Output Output `json:"output"`
	// Classes names the model's classes in output order; empty: from the
	// model's metadata, or a names file.
	Classes []string `json:"classes,omitempty"`
	// MinScore drops candidates below it (default 0.25).
	MinScore float64 `json:"min_score,omitempty"`
	// NMSIoU is the IoU of per-class non-maximum suppression (default
	// 0.5; negative: none, for models whose outputs are suppressed).
	NMSIoU float64 `json:"nms_iou,omitempty"`
	// MaxCandidates caps the candidates that go into the suppression,
	// best first (default 30000, common practice for dense detectors).
	MaxCandidates int `json:"max_candidates,omitempty"`
	// MaxDetections caps the boxes per image after the suppression, best
	// first (default 100).
	MaxDetections int `json:"max_detections,omitempty"`
}

// Input describes the pre-processing.
type Input struct {
	// Name is the input tensor's name; empty: the model's only input.
	Name string `json:"name,omitempty"`
	// Width and Height are the input size in pixels; 0: from the model.
	Width  int `json:"width,omitempty"`
	Height int `json:"height,omitempty"`
	// Resize is "letterbox" (keep the aspect ratio, pad; the default) or
	// "stretch" (fill the input, changing the aspect ratio).
	Resize string `json:"resize,omitempty"`
	// Align places a letterboxed image: "centre" (pad both sides evenly;
	// the default) or "top-left" (pad right and bottom only).
	Align string `json:"align,omitempty"`
	// Pad is the 0..255 grey level of the padding (default 114).
	Pad *float64 `json:"pad,omitempty"`
	// Channels is the channel order, "rgb" (default) or "bgr".
	Channels string `json:"channels,omitempty"`
	// Scale multiplies the 0..255 values first (default 1/255).
	Scale float64 `json:"scale,omitempty"`
	// Mean and Std normalise each channel after the scale: (v·Scale −
	// Mean[c]) / Std[c] (defaults 0 and 1).
	Mean []float64 `json:"mean,omitempty"`
	Std  []float64 `json:"std,omitempty"`
}

// Output describes the output decoding.
type Output struct {
	// Layout is one of the Layouts, or "auto" (the default): chosen from
	// the shapes of the outputs.
	Layout string `json:"layout,omitempty"`
	// Tensors names the outputs to decode, in the layout's order (boxes
	// before scores before class ids); empty: every output, in the model's
	// order.
	Tensors []string `json:"tensors,omitempty"`
	// Normalised says the boxes are in 0..1 of the input's width and
	// height rather than input pixels.
	Normalised bool `json:"normalised,omitempty"`
	// MultiLabel keeps every class whose score passes for a candidate;
	// otherwise only its best class.
	MultiLabel bool `json:"multi_label,omitempty"`
}

// The output layouts.
const (
	// LayoutCentreScores: one tensor of candidates × (4 + C), a centre-size
	// box then one score per class (or its transpose, (4 + C) × candidates).
	LayoutCentreScores = "centre-scores"
	// LayoutCentreObjectness: candidates × (5 + C), a centre-size box, an
	// objectness, then class scores; the score is objectness × class score.
	LayoutCentreObjectness = "centre-objectness-scores"
	// LayoutCornersScores: corner boxes N × 4 and scores N × C in separate
	// tensors, optionally a third of class ids (N, then scores are N × 1
	// or N).
	LayoutCornersScores = "corners-scores"
	// LayoutDetections: detections already suppressed, N × 6 (x0, y0, x1,
	// y1, score, class).
	LayoutDetections = "detections"
	LayoutAuto       = "auto"
)

// Layouts lists the output layouts, in the order auto-detection tries them.
var Layouts = []string{LayoutDetections, LayoutCornersScores, LayoutCentreObjectness, LayoutCentreScores}

// MaxInputSide and MaxInputPixels bound a model's input: its tensor of
// 3 × 16.8 million float32 is 200 MB, far above a detector's (640×640
// is common practice).
const (
	MaxInputSide   = 16384
	MaxInputPixels = 4096 * 4096
)

// DescriptionPath is where the description of a model file is kept:
// beside it, "model.onnx" → "model.onnx.description.json".
func DescriptionPath(model string) string { return model + ".description.json" }

// Defaults fills in every default.
func (d Description) Defaults() Description {
	if d.Format == "" {
		d.Format = DescriptionFormat
	}
	if d.Input.Resize == "" {
		d.Input.Resize = "letterbox"
	}
	if d.Input.Align == "" {
		d.Input.Align = "centre"
	}
	if d.Input.Pad == nil {
		p := 114.0 // common practice
		d.Input.Pad = &p
	}
	if d.Input.Channels == "" {
		d.Input.Channels = "rgb"
	}
	if d.Input.Scale == 0 {
		d.Input.Scale = 1.0 / 255
	}
	if len(d.Input.Mean) == 0 {
		d.Input.Mean = []float64{0, 0, 0}
	}
	if len(d.Input.Std) == 0 {
		d.Input.Std = []float64{1, 1, 1}
	}
	if d.Output.Layout == "" {
		d.Output.Layout = LayoutAuto
	}
	if d.MinScore == 0 {
		d.MinScore = 0.25 // common practice
	}
	if d.NMSIoU == 0 {
		d.NMSIoU = 0.5 // common practice
	}
	if d.MaxCandidates == 0 {
		d.MaxCandidates = 30000
	}
	if d.MaxDetections == 0 {
		d.MaxDetections = 100
	}
	return d
}

// Check says what is wrong with a description, naming the field (where
// is the file, for the message).
func (d Description) Check(where string) error {
	bad := func(field, format string, a ...any) error {
		return project.Explained(project.ErrInvalid, "%s: %s: %s", where, field, fmt.Sprintf(format, a...))
	}
	if d.Format != DescriptionFormat {
		return bad("format", "is %q; a model description says %q", d.Format, DescriptionFormat)
	}
	in := d.Input
	if in.Width < 0 || in.Height < 0 || in.Width > MaxInputSide || in.Height > MaxInputSide || (in.Width == 0) != (in.Height == 0) {
		return bad("input.width/height", "%d×%d: give both, each 1 to %d pixels, or neither (from the model)", in.Width, in.Height, MaxInputSide)
	}
	if in.Width*in.Height > MaxInputPixels {
		return bad("input.width/height", "%d×%d: more than %d pixels, more than any detector's input", in.Width, in.Height, MaxInputPixels)
	}
	if in.Resize != "letterbox" && in.Resize != "stretch" {
		return bad("input.resize", "%q: use letterbox or stretch", in.Resize)
	}
	if in.Align != "centre" && in.Align != "top-left" {
		return bad("input.align", "%q: use centre or top-left", in.Align)
	}
	if p := *in.Pad; !(p >= 0 && p <= 255) {
		return bad("input.pad", "%v: a grey level from 0 to 255", p)
	}
	if in.Channels != "rgb" && in.Channels != "bgr" {
		return bad("input.channels", "%q: use rgb or bgr", in.Channels)
	}
	if !finite(in.Scale) || in.Scale <= 0 {
		return bad("input.scale", "%v: a positive number (1/255 = 0.00392156862745098 maps 0..255 to 0..1)", in.Scale)
	}
	if len(in.Mean) != 3 || len(in.Std) != 3 {
		return bad("input.mean/std", "give three values each, one per channel (%d and %d given)", len(in.Mean), len(in.Std))
	}
	for c := range 3 {
		if !finite(in.Mean[c]) || !finite(in.Std[c]) || in.Std[c] <= 0 {
			return bad("input.mean/std", "channel %d: mean %v, std %v: finite, and std positive", c, in.Mean[c], in.Std[c])
		}
	}
	if d.Output.Layout != LayoutAuto && !isLayout(d.Output.Layout) {
		return bad("output.layout", "%q: use auto or one of %s", d.Output.Layout, strings.Join(Layouts, ", "))
	}
	if !(d.MinScore >= 0 && d.MinScore <= 1) {
		return bad("min_score", "%v: from 0 to 1", d.MinScore)
	}
	if !(d.NMSIoU <= 1) || math.IsNaN(d.NMSIoU) {
		return bad("nms_iou", "%v: at most 1 (negative: no suppression)", d.NMSIoU)
	}
	if d.MaxCandidates < 1 || d.MaxCandidates > 1000000 {
		return bad("max_candidates", "%d: from 1 to 1000000", d.MaxCandidates)
	}
	if d.MaxDetections < 1 || d.MaxDetections > 100000 {
		return bad("max_detections", "%d: from 1 to 100000", d.MaxDetections)
	}
	seen := map[string]bool{}
	for i, c := range d.Classes {
		if strings.TrimSpace(c) == "" || seen[c] {
			return bad("classes", "entry %d (%q) is empty or repeated", i+1, c)
		}
		seen[c] = true
	}
	return nil
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

func isLayout(s string) bool {
	for _, l := range Layouts {
		if l == s {
			return true
		}
	}
	return false
}

// maxDescription bounds a description file: it is a few hundred bytes,
// a names list of thousands of classes at most.
const maxDescription = 4 << 20

// ReadDescription reads a description file; a missing file is
// fs.ErrNotExist (wrapped), anything else wrong is named with its field.
func ReadDescription(path string) (Description, error) {
	f, err := os.Open(path)
	if err != nil {
		return Description{}, fmt.Errorf("model description %s: %w", path, err)
	}
	defer f.Close()
	if st, err := f.Stat(); err != nil || !st.Mode().IsRegular() {
		return Description{}, project.Explained(project.ErrInvalid, "model description %s: not a regular file", path)
	}
	b, err := io.ReadAll(io.LimitReader(f, maxDescription+1))
	if err != nil {
		return Description{}, fmt.Errorf("model description %s: %w", path, err)
	}
	if len(b) > maxDescription {
		return Description{}, project.Explained(project.ErrInvalid, "model description %s: larger than %d MiB; a description is a small JSON file", path, maxDescription>>20)
	}
	return ParseDescription(b, path)
}

// DescriptionOf reads the description kept beside a model file, or, when
// there is none, the defaults.
func DescriptionOf(model string) (Description, error) {
	d, err := ReadDescription(DescriptionPath(model))
	if errors.Is(err, fs.ErrNotExist) {
		return Description{}.Defaults(), nil
	}
	return d, err
}

// ParseDescription reads a description from JSON (where names it in
// messages). Unknown fields are refused: a misspelt field would otherwise
// be silently ignored.
func ParseDescription(b []byte, where string) (Description, error) {
	dec := json.NewDecoder(bytes.NewReader(b))
	dec.DisallowUnknownFields()
	var d Description
	if err := dec.Decode(&d); err != nil {
		var se *json.SyntaxError
		var te *json.UnmarshalTypeError
		switch {
		case errors.As(err, &se):
			return d, project.Explained(project.ErrInvalid, "%s: not a model description: JSON syntax error at byte %d: %v", where, se.Offset, err)
		case errors.As(err, &te):
			return d, project.Explained(project.ErrInvalid, "%s: field %s: %v", where, te.Field, err)
		}
		return d, project.Explained(project.ErrInvalid, "%s: %v", where, err)
	}
	if dec.More() {
		return d, project.Explained(project.ErrInvalid, "%s: more than one JSON value; a model description is one object", where)
	}
	if d.Format == "" {
		return d, project.Explained(project.ErrInvalid, "%s: no \"format\" field: not a model description (it starts with \"format\": %q)", where, DescriptionFormat)
	}
	d = d.Defaults()
	return d, d.Check(where)
}

// Write stores the description as indented JSON (through a temporary
// file and a rename, so that a failed write keeps the old one).
func (d Description) Write(path string) error {
	d = d.Defaults()
	if err := d.Check(path); err != nil {
		return err
	}
	b, err := json.MarshalIndent(d, "", "  ")
	if err != nil {
		return fmt.Errorf("model description %s: %w", path, err)
	}
	tmp := path + ".partial"
	if err := os.WriteFile(tmp, append(b, '\n'), 0o644); err != nil {
		os.Remove(tmp)
		return fmt.Errorf("model description %s: %w", path, err)
	}
	if err := os.Rename(tmp, path); err != nil {
		os.Remove(tmp)
		return fmt.Errorf("model description %s: %w", path, err)
	}
	return nil
}
