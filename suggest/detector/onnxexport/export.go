// Package onnxexport writes Boxwright's own detector (package detector) as
// an ONNX model, so that other programs can run a team's trained model.
//
// The file is ONNX IR version 8 with opset 13 of the default domain
// (ai.onnx) and nothing else: only standard operators (Conv,
// BatchNormalization, Relu, Resize, Add, Sigmoid, MaxPool, Pad, Slice, Max,
// Equal, Greater, Less, Cast, Mul, Sub, Exp, Reshape, Transpose). Each
// export is for one fixed input frame, width × height pixels, each a
// multiple of 32 (Frame picks it for images of a given size).
//
// Input "image" is float32 [1, 3, height, width], RGB, each value
// (v/255 − 0.45)/0.25, the image scaled so that its long side is the
// model's input size and placed at the top left of the frame, the rest
// black (0): what detector.PrepareImage makes, and what Describe says.
//
// Outputs, in this order:
//   - "boxes" float32 [1, N, 4]: per cell of the stride-4 grid, N =
//     (height/4)·(width/4) in reading order, the corner box (x0, y0, x1,
//     y1) in input pixels that the cell regresses, as detector.Decode
//     computes it: anchor ∓ 4·exp(clip(raw, −6, 6)), anchor (i + 0.5)·4.
//   - "scores" float32 [1, N, C]: the sigmoid of the class logits where the
//     cell is a peak of its 3×3 window, else 0. A peak is as in
//     detector.Decode: no neighbour higher, and no equal neighbour before
//     it in reading order (ties go to the first cell).
//   - "heat_logits" [1, C, height/4, width/4] and "box_log_distances"
//     [1, 4, height/4, width/4]: the network's raw maps (detector.Net's
//     Forward), for checking a runtime against Boxwright's own.
//
// The clip and the tie rule are written with comparisons, masks and
// multiplications (Greater, Less, Cast, Mul) rather than Clip and Where,
// because OpenCV 4.6's importer, one of the runtimes this is checked
// against, takes Clip only in its pre-opset-11 form and no Where; masks of
// 0 and 1 keep the results exact.
package onnxexport

import (
	"encoding/binary"
	"encoding/json"
	"fmt"
	"math"
	"strconv"

	"google.golang.org/protobuf/proto"

	"boxwright/project"
	"boxwright/suggest/detector"
	"boxwright/suggest/detector/nn"
	"boxwright/suggest/onnx"
	"boxwright/suggest/onnx/onnxpb"
)

// Opset is the version of the default operator set the files use, and
// IRVersion the ONNX file format version.
const (
	Opset     = 13
	IRVersion = 8
)

// architecture is the network layout this package rebuilds; a detector of
// another layout is refused rather than exported wrongly.
const architecture = "centre-heatmap/3"

// maxSide bounds the frame, as onnx.Description does.
const maxSide = 16384

// The tensor names of the file.
const (
	InputName     = "image"
	BoxesName     = "boxes"
	ScoresName    = "scores"
	HeatName      = "heat_logits"
	DistancesName = "box_log_distances"
)

// Defaults of Boxwright's own detection runs, which Describe passes on:
// the minimum score and NMS IoU of `boxwright detect` (app/cli/train.go)
// and of the training screen (app/gui/train_screen.go), and the box cap of
// detector.Suggester (TopK 0: 100).
const (
	DefaultMinScore      = 0.3
	DefaultNMSIoU        = 0.5
	DefaultMaxDetections = 100
)

// The input normalisation of detector.PrepareImage (its mean and spread).
const (
	inputMean = 0.45
	inputStd  = 0.25
)

// maxLogDistance is detector.Decode's clamp of the raw log-distances.
const maxLogDistance = 6

// Frame picks the export frame for images of w×h pixels: the frame the
// model's own pass uses for them.
func Frame(m *detector.Model, w, h int) (width, height int) {
	fw, fh, _ := detector.Frame(w, h, m.InputSize)
	return fw, fh
}

// Describe returns the description that feeds the exported file as
// Boxwright's own pass does, for images whose Frame is width×height.
func Describe(m *detector.Model, width, height int) onnx.Description {
	pad := 0.0
	return onnx.Description{
		Format: onnx.DescriptionFormat,
		Input: onnx.Input{Name: InputName, Width: width, Height: height, Resize: "letterbox", Align: "top-left", Pad: &pad,
			Channels: "rgb", Scale: 1.0 / 255, Mean: []float64{inputMean, inputMean, inputMean}, Std: []float64{inputStd, inputStd, inputStd}},
		Output:        onnx.Output{Layout: onnx.LayoutCornersScores, Tensors: []string{BoxesName, ScoresName}, MultiLabel: true},
		Classes:       append([]string(nil), m.Classes...),
		MinScore:      DefaultMinScore,
		NMSIoU:        DefaultNMSIoU,
		MaxCandidates: DefaultMaxDetections, // the own pass keeps its best peaks before the suppression
		MaxDetections: DefaultMaxDetections,
	}
}

// Export encodes m as an ONNX model for a fixed input frame of
// width×height input pixels (each a positive multiple of 32); name is the
// model's name, for the graph and for messages.
func Export(m *detector.Model, name string, width, height int) ([]byte, error) {
	if err := check(m, name, width, height); err != nil {
		return nil, err
	}
	g := &graph{}
	if err := g.network(m.Net); err != nil {
		return nil, project.Explained(project.ErrInvalid, "model %q cannot be exported: %v", name, err)
	}
	c, h, w := len(m.Classes), height/detector.Stride, width/detector.Stride
	g.decode(c, h, w)
	classes, err := json.Marshal(m.Classes)
	if err != nil {
		return nil, fmt.Errorf("model %q: classes: %w", name, err)
	}
	mp := &onnxpb.ModelProto{
		IrVersion:    proto.Int64(IRVersion),
		OpsetImport:  []*onnxpb.OperatorSetIdProto{{Domain: proto.String(""), Version: proto.Int64(Opset)}},
		ProducerName: proto.String("Boxwright"),
		DocString: proto.String(fmt.Sprintf("Boxwright detector %q (%s): %d classes, input %d×%d RGB normalised (v/255 − %v)/%v, "+
			"the image scaled to a long side of %d and placed top-left on black. Outputs boxes [1,N,4] (x0,y0,x1,y1 in input pixels, "+
			"one per stride-4 cell in reading order), scores [1,N,C] (sigmoid at 3×3 peaks, else 0), and the raw maps heat_logits and box_log_distances.",
			name, detector.Architecture, c, width, height, inputMean, inputStd, m.InputSize)),
		Graph: &onnxpb.GraphProto{
			Name:        proto.String(name),
			Node:        g.nodes,
			Initializer: g.inits,
			Input:       []*onnxpb.ValueInfoProto{valueInfo(InputName, 1, 3, int64(height), int64(width))},
			Output: []*onnxpb.ValueInfoProto{
				valueInfo(BoxesName, 1, int64(h*w), 4),
				valueInfo(ScoresName, 1, int64(h*w), int64(c)),
				valueInfo(HeatName, 1, int64(c), int64(h), int64(w)),
				valueInfo(DistancesName, 1, 4, int64(h), int64(w)),
			},
		},
		MetadataProps: []*onnxpb.StringStringEntryProto{
			{Key: proto.String("classes"), Value: proto.String(string(classes))},
			{Key: proto.String("boxwright.architecture"), Value: proto.String(detector.Architecture)},
			{Key: proto.String("boxwright.input_size"), Value: proto.String(strconv.Itoa(m.InputSize))},
		},
	}
	b, err := proto.Marshal(mp)
	if err != nil {
		return nil, fmt.Errorf("model %q: encode ONNX: %w", name, err)
	}
	return b, nil
}

// check refuses what cannot be exported, saying what to do.
func check(m *detector.Model, name string, width, height int) error {
	if name == "" {
		return project.Explained(project.ErrInvalid, "export: the model has no name: give the stored model's name")
	}
	if m == nil || m.Net == nil {
		return project.Explained(project.ErrInvalid, "model %q has no network to export", name)
	}
	if detector.Architecture != architecture {
		return project.Explained(project.ErrInvalid, "model %q is of architecture %q, which this exporter does not know (it writes %q)", name, detector.Architecture, architecture)
	}
	if len(m.Classes) == 0 {
		return project.Explained(project.ErrInvalid, "model %q has no classes: train it on at least one class", name)
	}
	if len(m.Classes) != m.Net.Classes {
		return project.Explained(project.ErrInvalid, "model %q names %d classes but its network predicts %d: the stored model is damaged; train it again", name, len(m.Classes), m.Net.Classes)
	}
	seen := map[string]bool{}
	for i, c := range m.Classes {
		if c == "" || seen[c] {
			return project.Explained(project.ErrInvalid, "model %q: class %d (%q) is empty or repeated", name, i+1, c)
		}
		seen[c] = true
	}
	if m.InputSize <= 0 {
		return project.Explained(project.ErrInvalid, "model %q has no input size", name)
	}
	const mult = 32
	if width <= 0 || height <= 0 || width%mult != 0 || height%mult != 0 || width > maxSide || height > maxSide {
		return project.Explained(project.ErrInvalid, "model %q: export frame %d×%d: each side must be a positive multiple of %d up to %d pixels (for images of w×h pixels, Frame gives the model's own frame)",
			name, width, height, mult, maxSide)
	}
	return nil
}

// graph collects the nodes and initializers of the file.
type graph struct {
	nodes []*onnxpb.NodeProto
	inits []*onnxpb.TensorProto
	names map[string]bool
}

// node adds a node named out with one output of the same name.
func (g *graph) node(op, out string, inputs []string, attrs ...*onnxpb.AttributeProto) string {
	if g.names == nil {
		g.names = map[string]bool{}
	}
	if g.names[out] {
		panic("onnxexport: tensor name used twice: " + out) // a bug in this package
	}
	g.names[out] = true
	g.nodes = append(g.nodes, &onnxpb.NodeProto{Name: proto.String(out), OpType: proto.String(op), Domain: proto.String(""),
		Input: inputs, Output: []string{out}, Attribute: attrs})
	return out
}

func (g *graph) floats(name string, dims []int64, v []float32) string {
	raw := make([]byte, 4*len(v))
	for i, f := range v {
		binary.LittleEndian.PutUint32(raw[4*i:], math.Float32bits(f))
	}
	g.inits = append(g.inits, &onnxpb.TensorProto{Name: proto.String(name), Dims: dims,
		DataType: proto.Int32(int32(onnxpb.TensorProto_FLOAT)), RawData: raw})
	return name
}

func (g *graph) ints(name string, v ...int64) string {
	g.inits = append(g.inits, &onnxpb.TensorProto{Name: proto.String(name), Dims: []int64{int64(len(v))},
		DataType: proto.Int32(int32(onnxpb.TensorProto_INT64)), Int64Data: v})
	return name
}

func (g *graph) scalar(name string, v float32) string { return g.floats(name, nil, []float32{v}) }

func (g *graph) param(p *nn.Param[float32]) string {
	dims := make([]int64, len(p.Shape))
	for i, d := range p.Shape {
		dims[i] = int64(d)
	}
	return g.floats(p.Name, dims, p.W)
}

// network adds the nodes of detector.Net's Forward (in eval mode) from
// "image" to "heat_logits" and "box_log_distances".
func (g *graph) network(n *detector.Net) error {
	block := func(name, in string) (string, error) {
		seq, ok := n.Layer(name).(*nn.Sequential[float32])
		if !ok || len(seq.Layers) != 3 {
			return "", fmt.Errorf("block %s is not conv → batch norm → ReLU", name)
		}
		conv, ok1 := seq.Layers[0].(*nn.Conv2D[float32])
		bn, ok2 := seq.Layers[1].(*nn.BatchNorm2D[float32])
		_, ok3 := seq.Layers[2].(*nn.ReLU[float32])
		if !ok1 || !ok2 || !ok3 {
			return "", fmt.Errorf("block %s is not conv → batch norm → ReLU", name)
		}
		x := g.conv(name+".conv", in, conv)
		x = g.node("BatchNormalization", name+".bn", []string{x, g.param(bn.Gamma), g.param(bn.Beta), g.param(bn.RunningMean), g.param(bn.RunningVar)},
			// ONNX's momentum is the running estimates' share kept at each
			// step, PyTorch's (and nn's) the share taken from the batch;
			// inference reads neither.
			attrFloat("epsilon", float32(bn.Eps)), attrFloat("momentum", float32(1-bn.Momentum)))
		return g.node("Relu", name+".relu", []string{x}), nil
	}
	head := func(name, out, in string) (string, error) {
		conv, ok := n.Layer(name).(*nn.Conv2D[float32])
		if !ok {
			return "", fmt.Errorf("head %s is not a convolution", name)
		}
		return g.conv(out, in, conv), nil
	}
	var err error
	chain := func(x string, names ...string) string {
		for _, b := range names {
			if err != nil {
				return ""
			}
			x, err = block(b, x)
		}
		return x
	}
	s4 := chain(InputName, "e1", "e2", "e3")
	s8 := chain(s4, "e4", "e5")
	s16 := chain(s8, "e6", "e7")
	d1 := chain(s16, "d1")
	if err != nil {
		return err
	}
	scales := g.floats("upsample.scales", []int64{4}, []float32{1, 1, 2, 2})
	up := func(name, in string) string {
		// Nearest with asymmetric coordinates and floor: output pixel i
		// reads input floor(i/2), nn.Upsample2x's 2×2 repeat.
		return g.node("Resize", name, []string{in, "", scales}, attrString("mode", "nearest"),
			attrString("coordinate_transformation_mode", "asymmetric"), attrString("nearest_mode", "floor"))
	}
	u8 := g.node("Add", "skip8", []string{up("up1", d1), s8})
	d2 := chain(u8, "d2")
	if err != nil {
		return err
	}
	u4 := g.node("Add", "skip4", []string{up("up2", d2), s4})
	t := chain(u4, "trunk")
	if err != nil {
		return err
	}
	if _, err := head("heat", HeatName, t); err != nil {
		return err
	}
	_, err = head("box", DistancesName, t)
	return err
}

// conv adds a convolution whose output is named out.
func (g *graph) conv(out, in string, c *nn.Conv2D[float32]) string {
	inputs := []string{in, g.param(c.Weight)}
	if c.Bias != nil {
		inputs = append(inputs, g.param(c.Bias))
	}
	k, s, p := int64(c.K), int64(c.Stride), int64(c.Pad)
	return g.node("Conv", out, inputs, attrInts("kernel_shape", k, k), attrInts("strides", s, s), attrInts("pads", p, p, p, p),
		attrInts("dilations", 1, 1), attrInt("group", 1))
}

// decode adds the nodes from the raw maps to "boxes" and "scores" for c
// classes on an h×w grid.
func (g *graph) decode(c, h, w int) {
	n := int64(h * w)
	// Distances: 4·exp(clip(raw, −6, 6)), the clip as
	// raw·(1 − hi − lo) + 6·(hi − lo) with masks hi = raw > 6 and
	// lo = raw < −6: each product is by 0 or 1 and each sum has a zero
	// term, so every step is exact.
	six := g.scalar("decode.max_log_distance", maxLogDistance)
	minusSix := g.scalar("decode.min_log_distance", -maxLogDistance)
	one := g.scalar("decode.one", 1)
	hi := g.node("Cast", "decode.above", []string{g.node("Greater", "decode.above_bool", []string{DistancesName, six})}, attrInt("to", int64(onnxpb.TensorProto_FLOAT)))
	lo := g.node("Cast", "decode.below", []string{g.node("Less", "decode.below_bool", []string{DistancesName, minusSix})}, attrInt("to", int64(onnxpb.TensorProto_FLOAT)))
	keep := g.node("Sub", "decode.inside", []string{one, g.node("Add", "decode.outside", []string{hi, lo})})
	bound := g.node("Mul", "decode.bound", []string{g.node("Sub", "decode.side", []string{hi, lo}), six})
	clipped := g.node("Add", "decode.clipped", []string{g.node("Mul", "decode.kept", []string{DistancesName, keep}), bound})
	// x0 = ax − d0, y0 = ay − d1, x1 = ax + d2, y1 = ay + d3.
	signs := g.floats("decode.signed_stride", []int64{1, 4, 1, 1}, []float32{-detector.Stride, -detector.Stride, detector.Stride, detector.Stride})
	d := g.node("Mul", "decode.signed_distances", []string{g.node("Exp", "decode.exp", []string{clipped}), signs})
	anchors := make([]float32, 4*h*w)
	for y := range h {
		for x := range w {
			j := y*w + x
			ax, ay := float32((float64(x)+0.5)*detector.Stride), float32((float64(y)+0.5)*detector.Stride)
			anchors[j], anchors[h*w+j], anchors[2*h*w+j], anchors[3*h*w+j] = ax, ay, ax, ay
		}
	}
	corners := g.node("Add", "decode.corners", []string{d, g.floats("decode.anchors", []int64{1, 4, int64(h), int64(w)}, anchors)})
	flat := g.node("Reshape", "decode.corners_flat", []string{corners, g.ints("decode.shape_boxes", 1, 4, n)})
	g.node("Transpose", BoxesName, []string{flat}, attrInts("perm", 0, 2, 1))

	// Scores: the sigmoid where the cell is at least every neighbour (it
	// equals the 3×3 max pool) and above those before it in reading order
	// (up-left, up, up-right, left: taken from a copy padded with −1,
	// below any probability).
	s := g.node("Sigmoid", "decode.probabilities", []string{HeatName})
	pooled := g.node("MaxPool", "decode.pooled", []string{s}, attrInts("kernel_shape", 3, 3), attrInts("strides", 1, 1), attrInts("pads", 1, 1, 1, 1))
	top := g.node("Cast", "decode.is_max", []string{g.node("Equal", "decode.is_max_bool", []string{s, pooled})}, attrInt("to", int64(onnxpb.TensorProto_FLOAT)))
	padded := g.node("Pad", "decode.padded", []string{s, g.ints("decode.pads", 0, 0, 1, 1, 0, 0, 1, 1), g.scalar("decode.pad_value", -1)}, attrString("mode", "constant"))
	axes := g.ints("decode.slice_axes", 2, 3)
	shifted := func(name string, dy, dx int64) string {
		return g.node("Slice", name, []string{padded, g.ints(name+".starts", 1+dy, 1+dx), g.ints(name+".ends", 1+dy+int64(h), 1+dx+int64(w)), axes})
	}
	before := g.node("Max", "decode.before_max", []string{
		g.node("Max", "decode.above_max", []string{shifted("decode.up_left", -1, -1), shifted("decode.up", -1, 0)}),
		g.node("Max", "decode.side_max", []string{shifted("decode.up_right", -1, 1), shifted("decode.left", 0, -1)}),
	})
	first := g.node("Cast", "decode.is_first", []string{g.node("Greater", "decode.is_first_bool", []string{s, before})}, attrInt("to", int64(onnxpb.TensorProto_FLOAT)))
	peaks := g.node("Mul", "decode.peak_scores", []string{g.node("Mul", "decode.max_scores", []string{s, top}), first})
	flatS := g.node("Reshape", "decode.scores_flat", []string{peaks, g.ints("decode.shape_scores", 1, int64(c), n)})
	g.node("Transpose", ScoresName, []string{flatS}, attrInts("perm", 0, 2, 1))
}

func valueInfo(name string, dims ...int64) *onnxpb.ValueInfoProto {
	shape := &onnxpb.TensorShapeProto{}
	for _, d := range dims {
		shape.Dim = append(shape.Dim, &onnxpb.TensorShapeProto_Dimension{Value: &onnxpb.TensorShapeProto_Dimension_DimValue{DimValue: d}})
	}
	return &onnxpb.ValueInfoProto{Name: proto.String(name), Type: &onnxpb.TypeProto{Value: &onnxpb.TypeProto_TensorType{
		TensorType: &onnxpb.TypeProto_Tensor{ElemType: proto.Int32(int32(onnxpb.TensorProto_FLOAT)), Shape: shape}}}}
}

func attrInts(name string, v ...int64) *onnxpb.AttributeProto {
	return &onnxpb.AttributeProto{Name: proto.String(name), Type: onnxpb.AttributeProto_INTS.Enum(), Ints: v}
}

func attrInt(name string, v int64) *onnxpb.AttributeProto {
	return &onnxpb.AttributeProto{Name: proto.String(name), Type: onnxpb.AttributeProto_INT.Enum(), I: proto.Int64(v)}
}

func attrFloat(name string, v float32) *onnxpb.AttributeProto {
	return &onnxpb.AttributeProto{Name: proto.String(name), Type: onnxpb.AttributeProto_FLOAT.Enum(), F: proto.Float32(v)}
}

func attrString(name, v string) *onnxpb.AttributeProto {
	return &onnxpb.AttributeProto{Name: proto.String(name), Type: onnxpb.AttributeProto_STRING.Enum(), S: []byte(v)}
}
