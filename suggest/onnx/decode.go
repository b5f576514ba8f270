package onnx

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strings"

	"boxwright/project"
	"boxwright/suggest"
)

// RawOutput is one output tensor of a run, as float32 (class ids of integer
// type are converted: they are small).
type RawOutput struct {
	Name  string
	Shape []int64
	Data  []float32
}

func (o RawOutput) String() string { return fmt.Sprintf("%s %s", o.Name, shapeString(o.Shape)) }

func shapeString(s []int64) string {
	parts := make([]string, len(s))
	for i, d := range s {
		if d < 0 {
			parts[i] = "?"
		} else {
			parts[i] = fmt.Sprint(d)
		}
	}
	return "[" + strings.Join(parts, "×") + "]"
}

// dims drops a leading batch dimension of 1 when more than rank want
// remain, so that [1, N, K] and [N, K] read alike.
func dims(s []int64, want int) []int64 {
	for len(s) > want && s[0] == 1 {
		s = s[1:]
	}
	return s
}

// Candidate is a box in input pixels with its class and score, before the
// minimum score, the mapping back and the suppression.
type Candidate struct {
	Box   project.Box
	Class int
	Score float64
}

// layoutPlan is a layout fitted to the output shapes: what decode needs.
type layoutPlan struct {
	layout     string
	classes    int  // C; 0 where the outputs do not say (detections, ids)
	transposed bool // centre layouts: (4 + C) × N
	n          int  // candidates
	k          int  // values per candidate (centre layouts)
}

// planLayout fits the named layout (or, for auto, the first of Layouts
// that fits) to the outputs; classes is the number of class names known
// (0: unknown), which settles the shapes that two layouts could both
// explain. The error lists the shapes found and the layouts tried.
func planLayout(layout string, outs []RawOutput, classes int) (layoutPlan, error) {
	tried := Layouts
	if layout != LayoutAuto {
		tried = []string{layout}
	}
	var why []string
	var fits []layoutPlan
	for _, l := range tried {
		p, err := fitLayout(l, outs, classes)
		if err != nil {
			why = append(why, fmt.Sprintf("%s: %v", l, err))
			continue
		}
		fits = append(fits, p)
	}
	found := make([]string, len(outs))
	for i, o := range outs {
		found[i] = o.String()
	}
	switch {
	case len(fits) == 1:
		return fits[0], nil
	case len(fits) > 1:
		names := make([]string, len(fits))
		for i, f := range fits {
			names[i] = fmt.Sprintf("%s (%d classes)", f.layout, f.classes)
		}
		return layoutPlan{}, project.Explained(project.ErrInvalid, "the outputs %s fit more than one layout: %s; give the class names (a names file) or the layout",
			strings.Join(found, ", "), strings.Join(names, " or "))
	}
	return layoutPlan{}, project.Explained(project.ErrInvalid, "the outputs %s fit no output layout (%s)", strings.Join(found, ", "), strings.Join(why, "; "))
}

func fitLayout(layout string, outs []RawOutput, classes int) (layoutPlan, error) {
	p := layoutPlan{layout: layout}
	switch layout {
	case LayoutCentreScores, LayoutCentreObjectness:
		if len(outs) != 1 {
			return p, fmt.Errorf("wants one tensor, found %d", len(outs))
		}
		s := dims(outs[0].Shape, 2)
		if len(s) != 2 {
			return p, fmt.Errorf("wants candidates × values, found rank %d", len(outs[0].Shape))
		}
		extra := int64(4)
		if layout == LayoutCentreObjectness {
			extra = 5
		}
		a, b := s[0], s[1]
		switch {
		case classes > 0 && b == extra+int64(classes) && a != b:
			p.n, p.k = int(a), int(b)
		case classes > 0 && a == extra+int64(classes):
			p.n, p.k, p.transposed = int(b), int(a), true
		case classes > 0:
			return p, fmt.Errorf("wants %d+%d values per candidate on one side", extra, classes)
		case b > extra && b < a:
			p.n, p.k = int(a), int(b)
		case a > extra && a < b:
			p.n, p.k, p.transposed = int(b), int(a), true
		default:
			return p, fmt.Errorf("wants more than %d values per candidate and more candidates than values", extra)
		}
		p.classes = p.k - int(extra)
		return p, nil
	case LayoutCornersScores:
		if len(outs) != 2 && len(outs) != 3 {
			return p, fmt.Errorf("wants boxes and scores (and class ids), found %d tensors", len(outs))
		}
		bs := dims(outs[0].Shape, 2)
		if len(bs) != 2 || bs[1] != 4 {
			return p, fmt.Errorf("wants boxes N × 4 first, found %s", shapeString(outs[0].Shape))
		}
		p.n = int(bs[0])
		ss := dims(outs[1].Shape, 2)
		if len(outs) == 3 {
			ss = dims(ss, 1)
			if len(ss) == 2 && ss[1] == 1 {
				ss = ss[:1]
			}
			is := dims(outs[2].Shape, 1)
			if len(is) == 2 && is[1] == 1 {
				is = is[:1]
			}
			if len(ss) != 1 || ss[0] != bs[0] || len(is) != 1 || is[0] != bs[0] {
				return p, fmt.Errorf("wants scores N and class ids N beside boxes N × 4, found %s and %s", shapeString(outs[1].Shape), shapeString(outs[2].Shape))
			}
			return p, nil
		}
		if len(ss) != 2 || ss[0] != bs[0] || ss[1] < 1 {
			return p, fmt.Errorf("wants scores N × C beside boxes N × 4, found %s", shapeString(outs[1].Shape))
		}
		if classes > 0 && int(ss[1]) != classes {
			return p, fmt.Errorf("wants %d scores per box (the classes named), found %d", classes, ss[1])
		}
		p.classes = int(ss[1])
		return p, nil
	case LayoutDetections:
		if len(outs) != 1 {
			return p, fmt.Errorf("wants one tensor, found %d", len(outs))
		}
		s := dims(outs[0].Shape, 2)
		if len(s) != 2 || s[1] != 6 {
			return p, fmt.Errorf("wants N × 6, found %s", shapeString(outs[0].Shape))
		}
		p.n = int(s[0])
		return p, nil
	}
	return p, fmt.Errorf("unknown layout %q", layout)
}

// candidates decodes the outputs by the plan: every candidate whose score
// is at least minScore (each class that passes when multiLabel, else the
// best class), boxes in input pixels. A class id outside 0..classes-1 is
// an error naming the row.
func (p layoutPlan) candidates(outs []RawOutput, o Output, inW, inH int, classes int, minScore float64) ([]Candidate, error) {
	var out []Candidate
	sx, sy := 1.0, 1.0
	if o.Normalised {
		sx, sy = float64(inW), float64(inH)
	}
	corners := func(x0, y0, x1, y1 float32) project.Box {
		return project.Box{X0: float64(x0) * sx, Y0: float64(y0) * sy, X1: float64(x1) * sx, Y1: float64(y1) * sy}
	}
	centre := func(cx, cy, w, h float32) project.Box {
		return project.Box{X0: float64(cx-w/2) * sx, Y0: float64(cy-h/2) * sy, X1: float64(cx+w/2) * sx, Y1: float64(cy+h/2) * sy}
	}
	add := func(b project.Box, scores func(c int) float64, nc int) {
		if o.MultiLabel {
			for c := range nc {
				if s := scores(c); s >= minScore {
					out = append(out, Candidate{Box: b, Class: c, Score: s})
				}
			}
			return
		}
		best, bs := -1, math.Inf(-1)
		for c := range nc {
			if s := scores(c); s > bs {
				best, bs = c, s
			}
		}
		if best >= 0 && bs >= minScore {
			out = append(out, Candidate{Box: b, Class: best, Score: bs})
		}
	}
	switch p.layout {
	case LayoutCentreScores, LayoutCentreObjectness:
		d := outs[0].Data
		at := func(i, j int) float32 { return d[i*p.k+j] }
		if p.transposed {
			at = func(i, j int) float32 { return d[j*p.n+i] }
		}
		first := 4
		if p.layout == LayoutCentreObjectness {
			first = 5
		}
		for i := range p.n {
			obj := 1.0
			if first == 5 {
				obj = float64(at(i, 4))
				if obj < minScore { // scores are at most 1
					continue
				}
			}
			add(centre(at(i, 0), at(i, 1), at(i, 2), at(i, 3)), func(c int) float64 { return obj * float64(at(i, first+c)) }, p.k-first)
		}
	case LayoutCornersScores:
		b, s := outs[0].Data, outs[1].Data
		if len(outs) == 3 {
			ids := outs[2].Data
			for i := range p.n {
				if float64(s[i]) < minScore {
					continue
				}
				c, err := classID(ids[i], classes, outs[2].Name, i)
				if err != nil {
					return nil, err
				}
				out = append(out, Candidate{Box: corners(b[4*i], b[4*i+1], b[4*i+2], b[4*i+3]), Class: c, Score: float64(s[i])})
			}
			break
		}
		nc := p.classes
		for i := range p.n {
			row := s[i*nc : (i+1)*nc]
			add(corners(b[4*i], b[4*i+1], b[4*i+2], b[4*i+3]), func(c int) float64 { return float64(row[c]) }, nc)
		}
	case LayoutDetections:
		d := outs[0].Data
		for i := range p.n {
			r := d[6*i : 6*i+6]
			if float64(r[4]) < minScore || r[4] <= 0 {
				continue
			}
			c, err := classID(r[5], classes, outs[0].Name, i)
			if err != nil {
				return nil, err
			}
			out = append(out, Candidate{Box: corners(r[0], r[1], r[2], r[3]), Class: c, Score: float64(r[4])})
		}
	}
	return out, nil
}

func classID(v float32, classes int, tensor string, row int) (int, error) {
	c := int(math.Round(float64(v)))
	if float64(v) != float64(c) || c < 0 || (classes > 0 && c >= classes) {
		return 0, project.Explained(project.ErrInvalid, "output %s, row %d: class id %v is not one of the %d classes named (0 to %d)", tensor, row, v, classes, classes-1)
	}
	return c, nil
}

// Detection is a box found on an image, in image pixels.
type Detection struct {
	Box   project.Box
	Class int
	Score float64
}

// Finish turns candidates into detections: the best maxCandidates, mapped
// back through the letterbox, clamped to the image, boxes under a pixel
// dropped, per-class NMS at nmsIoU (≤ 0: none), then the best
// maxDetections, best first (ties in candidate order).
func Finish(cs []Candidate, lb Letterbox, nmsIoU float64, maxCandidates, maxDetections int) []Detection {
	slices.SortStableFunc(cs, func(a, b Candidate) int { return cmp.Compare(b.Score, a.Score) })
	if maxCandidates > 0 && len(cs) > maxCandidates {
		cs = cs[:maxCandidates]
	}
	var ds []Detection
	var boxes []project.Box
	var scores []float64
	var classes []int
	for _, c := range cs {
		b := lb.ToImage(c.Box).Clamp(float64(lb.ImageW), float64(lb.ImageH))
		if b.Width() < 1 || b.Height() < 1 || math.IsNaN(b.X0+b.Y0+b.X1+b.Y1) {
			continue
		}
		ds = append(ds, Detection{Box: b, Class: c.Class, Score: c.Score})
		boxes, scores, classes = append(boxes, b), append(scores, c.Score), append(classes, c.Class)
	}
	out := make([]Detection, 0, len(ds))
	for _, i := range suggest.NMSByClass(boxes, scores, classes, nmsIoU) {
		out = append(out, ds[i])
	}
	slices.SortStableFunc(out, func(a, b Detection) int { return cmp.Compare(b.Score, a.Score) })
	if maxDetections > 0 && len(out) > maxDetections {
		out = out[:maxDetections]
	}
	return out
}
