package onnx

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"image"
	"io"
	"os"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"sync"

	ort "github.com/yalue/onnxruntime_go"
	"google.golang.org/protobuf/proto"

	"boxwright/project"
	"boxwright/suggest/onnx/onnxpb"
)

// MaxModelBytes bounds a model file (protobuf's own limit is 2 GiB).
const MaxModelBytes = 2<<30 - 1

// Model is an ONNX detector ready to run: its file read and checked, its
// description completed from the file (input size, class names), its
// output layout fitted to what one run on a blank input gave, and an ONNX
// Runtime session open. Detect may be called from several goroutines; the
// runs take turns (the runtime uses every core for each).
type Model struct {
	Path string
	// Desc is the description in force, every default and the input size
	// filled in; Desc.Output.Layout is the layout fitted, never auto.
	Desc Description
	// Classes are the class names in output order, from the description,
	// the names file or the model's metadata (ClassesFrom says which).
	Classes     []string
	ClassesFrom string
	// SHA256 is the file's digest; Version its model_version (0: none).
	SHA256  string
	Version int64
	// Producer is the program that wrote the file, when it says.
	Producer string

	input   string
	outputs []string // the outputs decoded, in the layout's order
	plan    layoutPlan
	mu      sync.Mutex
	session *ort.DynamicAdvancedSession
}

// Graph is what a model file says about its interface, read without the
// runtime.
type Graph struct {
	Inputs, Outputs []Tensor
	Metadata        map[string]string
	Version         int64
	Producer        string
	Opsets          map[string]int64
}

// Tensor is a graph input or output: its name, element type ("float32",
// …) and shape (-1 for a dimension the model leaves open).
type Tensor struct {
	Name  string
	Type  string
	Shape []int64
}

// ReadGraph reads an ONNX file's inputs, outputs and metadata. A file that
// is not an ONNX model is refused with a message that says so.
func ReadGraph(path string) (Graph, []byte, error) {
	f, err := os.Open(path)
	if err != nil {
		return Graph{}, nil, fmt.Errorf("model %s: %w", path, err)
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return Graph{}, nil, fmt.Errorf("model %s: %w", path, err)
	}
	if !st.Mode().IsRegular() {
		return Graph{}, nil, project.Explained(project.ErrInvalid, "model %s: not a regular file", path)
	}
	if st.Size() > MaxModelBytes {
		return Graph{}, nil, project.Explained(project.ErrInvalid, "model %s: %d bytes, more than an ONNX file can hold (2 GiB; larger models keep their weights in external files, which this program does not read)", path, st.Size())
	}
	data, err := io.ReadAll(f)
	if err != nil {
		return Graph{}, nil, fmt.Errorf("model %s: %w", path, err)
	}
	g, err := ParseGraph(data, path)
	return g, data, err
}

// ParseGraph reads an ONNX model's interface from its bytes.
func ParseGraph(data []byte, where string) (Graph, error) {
	notONNX := func(why string) error {
		return project.Explained(project.ErrInvalid, "model %s: not an ONNX model (%s); export the detector to ONNX first", where, why)
	}
	var m onnxpb.ModelProto
	if err := proto.Unmarshal(data, &m); err != nil {
		return Graph{}, notONNX(fmt.Sprintf("its bytes are not an ONNX protobuf message: %v", err))
	}
	gr := m.GetGraph()
	if m.GetIrVersion() <= 0 || gr == nil || len(gr.GetNode()) == 0 || len(gr.GetOutput()) == 0 {
		return Graph{}, notONNX("no IR version, graph, nodes or outputs")
	}
	g := Graph{Metadata: map[string]string{}, Version: m.GetModelVersion(), Producer: m.GetProducerName(), Opsets: map[string]int64{}}
	for _, kv := range m.GetMetadataProps() {
		g.Metadata[kv.GetKey()] = kv.GetValue()
	}
	for _, o := range m.GetOpsetImport() {
		g.Opsets[o.GetDomain()] = o.GetVersion()
	}
	inits := map[string]bool{}
	for _, t := range gr.GetInitializer() {
		inits[t.GetName()] = true
	}
	tensor := func(v *onnxpb.ValueInfoProto) Tensor {
		t := Tensor{Name: v.GetName(), Type: "unknown"}
		tt := v.GetType().GetTensorType()
		if tt == nil {
			t.Type = "not a tensor"
			return t
		}
		t.Type = elemType(tt.GetElemType())
		if tt.GetShape() == nil {
			t.Shape = nil
			return t
		}
		for _, d := range tt.GetShape().GetDim() {
			if v, ok := d.GetValue().(*onnxpb.TensorShapeProto_Dimension_DimValue); ok && v.DimValue > 0 {
				t.Shape = append(t.Shape, v.DimValue)
			} else {
				t.Shape = append(t.Shape, -1)
			}
		}
		if t.Shape == nil {
			t.Shape = []int64{} // a scalar
		}
		return t
	}
	for _, in := range gr.GetInput() {
		if !inits[in.GetName()] {
			g.Inputs = append(g.Inputs, tensor(in))
		}
	}
	for _, out := range gr.GetOutput() {
		g.Outputs = append(g.Outputs, tensor(out))
	}
	return g, nil
}

func elemType(t int32) string {
	switch onnxpb.TensorProto_DataType(t) {
	case onnxpb.TensorProto_FLOAT:
		return "float32"
	case onnxpb.TensorProto_DOUBLE:
		return "float64"
	case onnxpb.TensorProto_FLOAT16:
		return "float16"
	case onnxpb.TensorProto_UINT8:
		return "uint8"
	case onnxpb.TensorProto_INT8:
		return "int8"
	case onnxpb.TensorProto_INT32:
		return "int32"
	case onnxpb.TensorProto_INT64:
		return "int64"
	case onnxpb.TensorProto_BOOL:
		return "bool"
	}
	return fmt.Sprintf("element type %d", t)
}

// ModelClasses reads class names from a model's metadata: a "classes" or
// "names" entry holding a JSON list, or the {0: 'name', …} mapping
// detectors commonly export (common practice). It returns the key used.
func ModelClasses(meta map[string]string) ([]string, string, error) {
	for _, key := range []string{"classes", "names"} {
		v, ok := meta[key]
		if !ok {
			continue
		}
		names, err := parseNames(v)
		if err == nil && len(names) == 0 {
			err = fmt.Errorf("no names in it")
		}
		if err != nil {
			return nil, key, project.Explained(project.ErrInvalid, "the model's metadata entry %q cannot be read as class names: %v", key, err)
		}
		return names, key, nil
	}
	return nil, "", nil
}

var dictEntry = regexp.MustCompile(`^\s*(\d+)\s*:\s*(?:'((?:[^'\\]|\\.)*)'|"((?:[^"\\]|\\.)*)")\s*$`)

func parseNames(v string) ([]string, error) {
	v = strings.TrimSpace(v)
	var list []string
	if err := json.Unmarshal([]byte(v), &list); err == nil {
		return list, nil
	}
	var byIndex map[string]string
	if err := json.Unmarshal([]byte(v), &byIndex); err == nil {
		return fromIndexed(byIndex)
	}
	if !strings.HasPrefix(v, "{") || !strings.HasSuffix(v, "}") {
		return nil, fmt.Errorf("neither a JSON list of names nor a {0: 'name', …} mapping")
	}
	m := map[string]string{}
	body := strings.TrimSpace(v[1 : len(v)-1])
	if body == "" {
		return nil, fmt.Errorf("an empty mapping")
	}
	for _, part := range splitEntries(body) {
		g := dictEntry.FindStringSubmatch(part)
		if g == nil {
			return nil, fmt.Errorf("entry %q is not index: 'name'", strings.TrimSpace(part))
		}
		name := g[2] + g[3]
		name = strings.NewReplacer(`\'`, `'`, `\"`, `"`, `\\`, `\`).Replace(name)
		m[g[1]] = name
	}
	return fromIndexed(m)
}

// splitEntries splits "0: 'a', 1: 'b, c'" at the commas outside quotes.
func splitEntries(s string) []string {
	var out []string
	var quote rune
	start, escaped := 0, false
	for i, r := range s {
		switch {
		case escaped:
			escaped = false
		case r == '\\':
			escaped = true
		case quote != 0 && r == quote:
			quote = 0
		case quote == 0 && (r == '\'' || r == '"'):
			quote = r
		case quote == 0 && r == ',':
			out = append(out, s[start:i])
			start = i + 1
		}
	}
	if rest := s[start:]; strings.TrimSpace(rest) != "" {
		out = append(out, rest)
	}
	return out
}

func fromIndexed(m map[string]string) ([]string, error) {
	names := make([]string, len(m))
	for k, v := range m {
		i, err := strconv.Atoi(strings.TrimSpace(k))
		if err != nil || i < 0 || i >= len(m) {
			return nil, fmt.Errorf("index %q: the indices must be 0 to %d", k, len(m)-1)
		}
		names[i] = v
	}
	return names, nil
}

// ReadNames reads a names file: one class name per line, in output order;
// blank lines at the end are ignored, others are an error naming the line.
func ReadNames(path string) ([]string, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("names file %s: %w", path, err)
	}
	defer f.Close()
	if st, err := f.Stat(); err != nil || !st.Mode().IsRegular() {
		return nil, project.Explained(project.ErrInvalid, "names file %s: not a regular file", path)
	}
	b, err := io.ReadAll(io.LimitReader(f, maxDescription+1))
	if err != nil {
		return nil, fmt.Errorf("names file %s: %w", path, err)
	}
	if len(b) > maxDescription {
		return nil, project.Explained(project.ErrInvalid, "names file %s: larger than %d MiB; it holds one class name per line", path, maxDescription>>20)
	}
	lines := strings.Split(strings.TrimRight(strings.ReplaceAll(string(b), "\r\n", "\n"), "\n \t"), "\n")
	seen := map[string]int{}
	var names []string
	for i, l := range lines {
		l = strings.TrimSpace(l)
		if l == "" {
			return nil, project.Explained(project.ErrInvalid, "names file %s, line %d: empty; each line names one class, in the model's output order", path, i+1)
		}
		if j, dup := seen[l]; dup {
			return nil, project.Explained(project.ErrInvalid, "names file %s, line %d: %q repeats line %d", path, i+1, l, j)
		}
		seen[l] = i + 1
		names = append(names, l)
	}
	if len(names) == 0 || (len(names) == 1 && names[0] == "") {
		return nil, project.Explained(project.ErrInvalid, "names file %s: no class names", path)
	}
	return names, nil
}

// OpenOptions are what the user gives beside the model file.
type OpenOptions struct {
	// Desc is the description; its zero value is read from beside the
	// model when a description file is there, else every default.
	Desc *Description
	// Names are class names from a names file (NamesFile, for messages).
	Names     []string
	NamesFile string
	// Runtime is the runtime library's path ("" to search).
	Runtime string
	// Threads caps the runtime's threads (0: one per core).
	Threads int
}

// Open reads, checks and prepares a model. Every way it can fail leaves
// nothing open and says what to change.
func Open(path string, opt OpenOptions) (*Model, error) {
	g, data, err := ReadGraph(path)
	if err != nil {
		return nil, err
	}
	var d Description
	switch {
	case opt.Desc != nil:
		d = opt.Desc.Defaults()
	default:
		dp := DescriptionPath(path)
		read, err := ReadDescription(dp)
		switch {
		case err == nil:
			d = read
		case errors.Is(err, os.ErrNotExist):
			d = Description{}.Defaults()
		default:
			return nil, err
		}
	}
	if err := d.Check("model description of " + path); err != nil {
		return nil, err
	}
	sum := sha256.Sum256(data)
	m := &Model{Path: path, Desc: d, SHA256: hex.EncodeToString(sum[:]), Version: g.Version, Producer: g.Producer}
	if err := m.fitInput(g); err != nil {
		return nil, err
	}
	if err := m.pickOutputs(g); err != nil {
		return nil, err
	}
	if err := m.pickClasses(g, opt); err != nil {
		return nil, err
	}
	if _, err := LoadRuntime(opt.Runtime); err != nil {
		return nil, fmt.Errorf("model %s: %w", path, err)
	}
	so, err := ort.NewSessionOptions()
	if err != nil {
		return nil, fmt.Errorf("model %s: runtime options: %w", path, err)
	}
	defer so.Destroy()
	if opt.Threads > 0 {
		so.SetIntraOpNumThreads(opt.Threads)
	}
	// The runtime's threads would otherwise spin between runs and starve
	// the goroutines that decode the next images.
	so.AddSessionConfigEntry("session.intra_op.allow_spinning", "0")
	m.session, err = ort.NewDynamicAdvancedSessionWithONNXData(data, []string{m.input}, m.outputs, so)
	if err != nil {
		return nil, project.Explained(project.ErrInvalid, "model %s: ONNX Runtime %s cannot load it: %v", path, ort.GetVersion(), err)
	}
	// One run on a blank input fits the layout to the real output shapes
	// (a model may leave them open) before any image is touched.
	in := m.Desc.Input
	blank := image.NewRGBA(image.Rect(0, 0, in.Width, in.Height))
	outs, err := m.Infer(FitLetterbox(in.Width, in.Height, in.Width, in.Height, in.Resize, in.Align).Tensor(blank, in))
	if err != nil {
		m.Close()
		return nil, err
	}
	plan, err := planLayout(d.Output.Layout, outs, len(m.Classes))
	if err != nil {
		// Names of the wrong count are the likelier mistake when the
		// shapes fit without them.
		if p, err2 := planLayout(d.Output.Layout, outs, 0); err2 == nil && p.classes > 0 {
			plan = p
		} else {
			m.Close()
			return nil, fmt.Errorf("model %s: %w", path, err)
		}
	}
	if plan.classes > 0 && len(m.Classes) != plan.classes {
		m.Close()
		return nil, project.Explained(project.ErrInvalid, "model %s: %s names %d classes, but its outputs (%s) read as layout %s have %d", path, m.ClassesFrom, len(m.Classes), describeOutputs(outs), plan.layout, plan.classes)
	}
	m.plan = plan
	m.Desc.Output.Layout = plan.layout
	return m, nil
}

func describeOutputs(outs []RawOutput) string {
	s := make([]string, len(outs))
	for i, o := range outs {
		s[i] = o.String()
	}
	return strings.Join(s, ", ")
}

// fitInput checks the model's input and settles the input size.
func (m *Model) fitInput(g Graph) error {
	d := &m.Desc
	var in *Tensor
	switch {
	case d.Input.Name != "":
		for i := range g.Inputs {
			if g.Inputs[i].Name == d.Input.Name {
				in = &g.Inputs[i]
			}
		}
		if in == nil {
			return project.Explained(project.ErrInvalid, "model %s has no input %q (it has %s)", m.Path, d.Input.Name, tensorNames(g.Inputs))
		}
	case len(g.Inputs) == 1:
		in = &g.Inputs[0]
	default:
		return project.Explained(project.ErrInvalid, "model %s has %d inputs (%s); a detector takes one image: name it in the description's input.name", m.Path, len(g.Inputs), tensorNames(g.Inputs))
	}
	bad := func(format string, a ...any) error {
		return project.Explained(project.ErrInvalid, "model %s: input %s %s: %s", m.Path, in.Name, shapeString(in.Shape), fmt.Sprintf(format, a...))
	}
	if in.Type != "float32" {
		return bad("its elements are %s; this program feeds float32 images (NCHW)", in.Type)
	}
	if len(in.Shape) != 4 {
		return bad("rank %d; this program feeds one image as batch × channels × height × width (NCHW, rank 4)", len(in.Shape))
	}
	if n := in.Shape[0]; n != 1 && n != -1 {
		return bad("a batch of %d; this program feeds one image at a time (a batch of 1 or open)", n)
	}
	if c := in.Shape[1]; c != 3 && c != -1 {
		return bad("%d channels; this program feeds 3 (NCHW: channels come second)", c)
	}
	h, w := in.Shape[2], in.Shape[3]
	switch {
	case d.Input.Width == 0 && (h < 0 || w < 0):
		return bad("its height and width are left open; give the input size (--input WxH, or input.width and input.height in the description)")
	case d.Input.Width == 0:
		d.Input.Width, d.Input.Height = int(w), int(h)
	case (w > 0 && int64(d.Input.Width) != w) || (h > 0 && int64(d.Input.Height) != h):
		return bad("the model takes %d×%d, but %d×%d was given", w, h, d.Input.Width, d.Input.Height)
	}
	if d.Input.Width > MaxInputSide || d.Input.Height > MaxInputSide || d.Input.Width*d.Input.Height > MaxInputPixels {
		return bad("%d×%d is larger than this program feeds (%d pixels a side, %d in all)", d.Input.Width, d.Input.Height, MaxInputSide, MaxInputPixels)
	}
	m.input = in.Name
	return nil
}

func (m *Model) pickOutputs(g Graph) error {
	names := m.Desc.Output.Tensors
	if len(names) == 0 {
		for _, o := range g.Outputs {
			names = append(names, o.Name)
		}
	}
	known := map[string]Tensor{}
	for _, o := range g.Outputs {
		known[o.Name] = o
	}
	for _, n := range names {
		o, ok := known[n]
		if !ok {
			return project.Explained(project.ErrInvalid, "model %s has no output %q (it has %s)", m.Path, n, tensorNames(g.Outputs))
		}
		switch o.Type {
		case "float32", "int64", "int32":
		default:
			return project.Explained(project.ErrInvalid, "model %s: output %s holds %s; this program reads float32 outputs (and integer class ids)", m.Path, n, o.Type)
		}
	}
	m.outputs = names
	return nil
}

func (m *Model) pickClasses(g Graph, opt OpenOptions) error {
	switch {
	case len(m.Desc.Classes) > 0:
		m.Classes, m.ClassesFrom = m.Desc.Classes, "the description"
	case len(opt.Names) > 0:
		m.Classes, m.ClassesFrom = opt.Names, "names file "+opt.NamesFile
	default:
		names, key, err := ModelClasses(g.Metadata)
		if err != nil {
			return fmt.Errorf("model %s: %w", m.Path, err)
		}
		if len(names) == 0 {
			return project.Explained(project.ErrInvalid, "model %s names no classes in its metadata: give a names file (one class per line, in output order) or classes in its description", m.Path)
		}
		m.Classes, m.ClassesFrom = names, fmt.Sprintf("its metadata (%q)", key)
	}
	seen := map[string]bool{}
	for i, c := range m.Classes {
		if strings.TrimSpace(c) == "" || seen[c] {
			return project.Explained(project.ErrInvalid, "model %s: class %d of %s (%q) is empty or repeated", m.Path, i, m.ClassesFrom, c)
		}
		seen[c] = true
	}
	return nil
}

func tensorNames(ts []Tensor) string {
	s := make([]string, len(ts))
	for i, t := range ts {
		s[i] = t.Name + " " + shapeString(t.Shape) + " " + t.Type
	}
	sort.Strings(s)
	return strings.Join(s, ", ")
}

// Infer runs the model on one input tensor (Prepare) and returns the
// outputs it decodes, raw.
func (m *Model) Infer(x []float32) ([]RawOutput, error) {
	d := m.Desc.Input
	in, err := ort.NewTensor(ort.NewShape(1, 3, int64(d.Height), int64(d.Width)), x)
	if err != nil {
		return nil, fmt.Errorf("model %s: input tensor: %w", m.Path, err)
	}
	defer in.Destroy()
	vals := make([]ort.Value, len(m.outputs))
	m.mu.Lock()
	err = m.session.Run([]ort.Value{in}, vals)
	m.mu.Unlock()
	defer func() {
		for _, v := range vals {
			if v != nil {
				v.Destroy()
			}
		}
	}()
	if err != nil {
		return nil, fmt.Errorf("model %s: running it: %w", m.Path, err)
	}
	outs := make([]RawOutput, len(vals))
	for i, v := range vals {
		o := RawOutput{Name: m.outputs[i], Shape: []int64(v.GetShape())}
		switch t := v.(type) {
		case *ort.Tensor[float32]:
			o.Data = append([]float32(nil), t.GetData()...)
		case *ort.Tensor[int64]:
			for _, x := range t.GetData() {
				o.Data = append(o.Data, float32(x))
			}
		case *ort.Tensor[int32]:
			for _, x := range t.GetData() {
				o.Data = append(o.Data, float32(x))
			}
		default:
			return nil, project.Explained(project.ErrInvalid, "model %s: output %s is not a float32 or integer tensor", m.Path, o.Name)
		}
		outs[i] = o
	}
	return outs, nil
}

// Detect finds objects on one image (pixels as displayed).
func (m *Model) Detect(img image.Image) ([]Detection, error) {
	x, lb := m.Prepare(img)
	return m.DetectPrepared(x, lb)
}

// Prepare is Detect's pre-processing, which may run apart from (and
// beside) the inference.
func (m *Model) Prepare(img image.Image) ([]float32, Letterbox) {
	b := img.Bounds()
	return m.PrepareScaled(img, b.Dx(), b.Dy())
}

// PrepareScaled is Prepare for a smaller copy of an image of w×h pixels
// (a JPEG decoded at a DCT-domain scale): the letterbox, and so the boxes,
// are of the image itself.
func (m *Model) PrepareScaled(img image.Image, w, h int) ([]float32, Letterbox) {
	d := m.Desc.Input
	lb := FitLetterbox(w, h, d.Width, d.Height, d.Resize, d.Align)
	return lb.Tensor(img, d), lb
}

// MinSize is the size of an image of w×h pixels inside the model's input:
// the least of its pixels a run needs.
func (m *Model) MinSize(w, h int) (int, int) {
	d := m.Desc.Input
	lb := FitLetterbox(w, h, d.Width, d.Height, d.Resize, d.Align)
	return min(lb.Width, w), min(lb.Height, h)
}

// DetectPrepared runs the model on a prepared input and decodes it.
func (m *Model) DetectPrepared(x []float32, lb Letterbox) ([]Detection, error) {
	outs, err := m.Infer(x)
	if err != nil {
		return nil, err
	}
	cs, err := m.Candidates(outs, lb)
	if err != nil {
		return nil, err
	}
	return Finish(cs, lb, m.Desc.NMSIoU, m.Desc.MaxCandidates, m.Desc.MaxDetections), nil
}

// Candidates decodes raw outputs (checked against the fitted layout: a
// model whose output shapes change from run to run is refused).
func (m *Model) Candidates(outs []RawOutput, lb Letterbox) ([]Candidate, error) {
	plan, err := planLayout(m.plan.layout, outs, len(m.Classes))
	if err != nil {
		return nil, fmt.Errorf("model %s: %w", m.Path, err)
	}
	return plan.candidates(outs, m.Desc.Output, lb.InputW, lb.InputH, len(m.Classes), m.Desc.MinScore)
}

// Source is the suggestion source name of the model: its file name and a
// version (the model's own, else the first digits of its SHA-256), so that
// two versions of one file are told apart in the review statistics.
func (m *Model) Source() string {
	v := m.SHA256[:8]
	if m.Version > 0 {
		v = fmt.Sprintf("v%d-%s", m.Version, m.SHA256[:8])
	}
	return fmt.Sprintf("onnx:%s@%s", filepath.Base(m.Path), v)
}

// Close ends the session.
func (m *Model) Close() {
	if m.session != nil {
		m.session.Destroy()
		m.session = nil
	}
}
