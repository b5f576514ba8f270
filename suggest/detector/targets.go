package detector

import (
	"math"
	"sort"

	"boxwright/project"
	"boxwright/suggest"
)

// Targets are what the network should output for one sample, at stride 4:
// a heat map per class with a Gaussian peak at each object's centre, and at
// each centre cell the object's size and the centre's offset within the
// cell.
type Targets struct {
	C, H, W int
	Heat    []float32 // C·H·W
	// Size and Offset are 2·H·W planes (width, height; x, y), meaningful
	// where Mask is 1.
	Size, Offset []float32
	Mask         []float32 // H·W: 1 at object centres
}

// gaussianRadius is the radius, in cells, within which a corner-shifted box
// still overlaps the object with IoU ≥ minOverlap: the smallest root of the
// three cases of CornerNet (Law & Deng 2018), which "Objects as Points"
// reuses for its centre peaks.
func gaussianRadius(h, w, minOverlap float64) float64 {
	b1 := h + w
	c1 := w * h * (1 - minOverlap) / (1 + minOverlap)
	r1 := (b1 + math.Sqrt(b1*b1-4*c1)) / 2
	b2 := 2 * (h + w)
	c2 := (1 - minOverlap) * w * h
	r2 := (b2 + math.Sqrt(b2*b2-16*c2)) / 2
	a3 := 4 * minOverlap
	b3 := -2 * minOverlap * (h + w)
	c3 := (minOverlap - 1) * w * h
	r3 := (b3 + math.Sqrt(b3*b3-4*a3*c3)) / 2
	return min(r1, r2, r3)
}

// Encode builds the targets of a sample for numClasses classes.
func Encode(s Sample, numClasses int) Targets {
	w, h := s.W/Stride, s.H/Stride
	t := Targets{C: numClasses, H: h, W: w, Heat: make([]float32, numClasses*h*w),
		Size: make([]float32, 2*h*w), Offset: make([]float32, 2*h*w), Mask: make([]float32, h*w)}
	// Larger boxes first, so that a small object whose centre falls in the
	// same cell keeps its size there.
	order := make([]int, len(s.Boxes))
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(a, b int) bool { return s.Boxes[order[a]].Area() > s.Boxes[order[b]].Area() })
	for _, i := range order {
		b, k := s.Boxes[i], s.Classes[i]
		bw, bh := b.Width()/Stride, b.Height()/Stride
		if bw <= 0 || bh <= 0 {
			continue
		}
		cx, cy := (b.X0+b.X1)/2/Stride, (b.Y0+b.Y1)/2/Stride
		px, py := min(int(cx), w-1), min(int(cy), h-1)
		r := max(0, math.Floor(gaussianRadius(math.Ceil(bh), math.Ceil(bw), 0.7)))
		drawGaussian(t.Heat[k*h*w:(k+1)*h*w], w, h, px, py, int(r))
		j := py*w + px
		t.Size[j], t.Size[h*w+j] = float32(bw), float32(bh)
		t.Offset[j], t.Offset[h*w+j] = float32(cx-float64(px)), float32(cy-float64(py))
		t.Mask[j] = 1
	}
	return t
}

// drawGaussian raises the heat map to a Gaussian of the given radius at
// (px, py), σ = diameter/6, keeping the larger value where peaks meet (the
// reference implementation's rule).
func drawGaussian(heat []float32, w, h, px, py, r int) {
	sigma := float64(2*r+1) / 6
	for y := max(0, py-r); y <= min(h-1, py+r); y++ {
		for x := max(0, px-r); x <= min(w-1, px+r); x++ {
			dx, dy := float64(x-px), float64(y-py)
			v := float32(math.Exp(-(dx*dx + dy*dy) / (2 * sigma * sigma)))
			if x == px && y == py {
				v = 1
			}
			if v > heat[y*w+x] {
				heat[y*w+x] = v
			}
		}
	}
}

// Detection is one box the network found, in the input's pixels.
type Detection struct {
	Class int
	Box   project.Box
	Score float64
}

// Decode reads detections from the network's outputs for one image: heat
// (C·H·W probabilities after the sigmoid), size and offset (2·H·W each).
// A cell is a peak when no neighbour in its 3×3 window is higher (the
// max-pool test of "Objects as Points" in place of NMS); the best topK
// peaks at or above minScore are kept, best first.
func Decode(heat, size, offset []float32, c, h, w, topK int, minScore float64) []Detection {
	var out []Detection
	for k := 0; k < c; k++ {
		p := heat[k*h*w : (k+1)*h*w]
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				v := p[y*w+x]
				if float64(v) < minScore || !isPeak(p, w, h, x, y) {
					continue
				}
				j := y*w + x
				cx, cy := (float64(x)+float64(offset[j]))*Stride, (float64(y)+float64(offset[h*w+j]))*Stride
				bw, bh := math.Max(float64(size[j]), 0.5)*Stride, math.Max(float64(size[h*w+j]), 0.5)*Stride
				out = append(out, Detection{Class: k, Score: float64(v),
					Box: project.Box{X0: cx - bw/2, Y0: cy - bh/2, X1: cx + bw/2, Y1: cy + bh/2}})
			}
		}
	}
	sort.SliceStable(out, func(i, j int) bool { return out[i].Score > out[j].Score })
	if topK > 0 && len(out) > topK {
		out = out[:topK]
	}
	return out
}

func isPeak(p []float32, w, h, x, y int) bool {
	v := p[y*w+x]
	for yy := max(0, y-1); yy <= min(h-1, y+1); yy++ {
		for xx := max(0, x-1); xx <= min(w-1, x+1); xx++ {
			if q := p[yy*w+xx]; q > v || (q == v && yy*w+xx < y*w+x) {
				return false // ties: the first cell in reading order wins
			}
		}
	}
	return true
}

// ToImage maps detections from input pixels back to the image (scale is
// input pixels per image pixel), clamps them to it, and applies per-class
// non-maximum suppression at nmsIoU (0: none).
func ToImage(ds []Detection, scale float64, imgW, imgH int, nmsIoU float64) []Detection {
	var out []Detection
	byClass := map[int][]Detection{}
	for _, d := range ds {
		b := project.Box{X0: d.Box.X0 / scale, Y0: d.Box.Y0 / scale, X1: d.Box.X1 / scale, Y1: d.Box.Y1 / scale}.Clamp(float64(imgW), float64(imgH))
		if b.Width() < 1 || b.Height() < 1 {
			continue
		}
		d.Box = b
		byClass[d.Class] = append(byClass[d.Class], d)
	}
	classes := make([]int, 0, len(byClass))
	for k := range byClass {
		classes = append(classes, k)
	}
	sort.Ints(classes)
	for _, k := range classes {
		list := byClass[k]
		if nmsIoU <= 0 {
			out = append(out, list...)
			continue
		}
		boxes := make([]project.Box, len(list))
		scores := make([]float64, len(list))
		for i, d := range list {
			boxes[i], scores[i] = d.Box, d.Score
		}
		for _, i := range suggest.NMS(boxes, scores, nmsIoU) {
			out = append(out, list[i])
		}
	}
	sort.SliceStable(out, func(i, j int) bool { return out[i].Score > out[j].Score })
	return out
}
