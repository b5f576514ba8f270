package detector

import (
	"math"
	"sort"

	"boxwright/project"
	"boxwright/suggest"
	"boxwright/suggest/detector/nn"
)

// Targets are what the network should output for one sample, at stride 4,
// after TTFNet ("Training-Time-Friendly Network for Real-Time Object
// Detection", Liu et al. 2020): a heat map per class with an elliptical
// Gaussian at each object's centre, shaped like the box, and around each
// centre a patch of cells that all regress the object's box, weighted by
// the same Gaussian. Every cell of the patch is a training sample, which is
// what lets a small network learn in minutes rather than hours.
type Targets struct {
	C, H, W int
	Heat    []float32 // C·H·W
	// Box holds, per cell, the corners (x0, y0, x1, y1) of the box the
	// cell regresses, in input pixels: 4 planes of H·W.
	Box []float32
	// Weight is each cell's share of the box loss (0: no box there). The
	// weights of one object sum to the log of its area, so that large
	// objects count more but not in proportion to their many cells.
	Weight []float32 // H·W
}

// gaussAlpha scales the heat Gaussian to the box (radius α·side/2) and
// gaussBeta the regression patch, TTFNet's α = β = 0.54.
const gaussAlpha, gaussBeta = 0.54, 0.54

// Encode builds the targets of a sample for numClasses classes.
func Encode(s Sample, numClasses int) Targets {
	w, h := s.W/Stride, s.H/Stride
	t := Targets{C: numClasses, H: h, W: w, Heat: make([]float32, numClasses*h*w),
		Box: make([]float32, 4*h*w), Weight: make([]float32, h*w)}
	// Larger boxes first, so that a smaller object overlapping one keeps
	// the cells near its own centre (TTFNet's order).
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
		px := min(max(int((b.X0+b.X1)/2/Stride), 0), w-1)
		py := min(max(int((b.Y0+b.Y1)/2/Stride), 0), h-1)
		rx, ry := int(gaussAlpha*bw/2), int(gaussAlpha*bh/2)
		drawGaussian(t.Heat[k*h*w:(k+1)*h*w], w, h, px, py, rx, ry)
		// The regression patch: the Gaussian of radius β·side/2, cut to
		// the cells whose centre lies in the box, normalised to sum to
		// log(area) (at least 1 for tiny boxes).
		rx, ry = int(gaussBeta*bw/2), int(gaussBeta*bh/2)
		patch := make([]float32, w*h)
		drawGaussian(patch, w, h, px, py, rx, ry)
		var sum float64
		for y := max(0, py-ry); y <= min(h-1, py+ry); y++ {
			for x := max(0, px-rx); x <= min(w-1, px+rx); x++ {
				if !cellInBox(x, y, b) && !(x == px && y == py) {
					patch[y*w+x] = 0
				}
				sum += float64(patch[y*w+x])
			}
		}
		norm := math.Max(math.Log(b.Area()), 1) / sum
		for y := max(0, py-ry); y <= min(h-1, py+ry); y++ {
			for x := max(0, px-rx); x <= min(w-1, px+rx); x++ {
				j := y*w + x
				if patch[j] == 0 {
					continue
				}
				t.Weight[j] = float32(float64(patch[j]) * norm)
				t.Box[j], t.Box[h*w+j], t.Box[2*h*w+j], t.Box[3*h*w+j] = float32(b.X0), float32(b.Y0), float32(b.X1), float32(b.Y1)
			}
		}
	}
	return t
}

// cellInBox reports whether the anchor point of cell (x, y) lies inside b.
func cellInBox(x, y int, b project.Box) bool {
	ax, ay := anchor(x), anchor(y)
	return ax > b.X0 && ax < b.X1 && ay > b.Y0 && ay < b.Y1
}

// anchor is the input-pixel coordinate a cell's distances are measured
// from: the middle of its Stride pixels.
func anchor(i int) float64 { return (float64(i) + 0.5) * Stride }

// drawGaussian raises the heat map to an elliptical Gaussian of radii
// (rx, ry) cells at (px, py), σ = diameter/6 on each axis, keeping the
// larger value where peaks meet (the reference implementations' rule).
func drawGaussian(heat []float32, w, h, px, py, rx, ry int) {
	sx, sy := float64(2*rx+1)/6, float64(2*ry+1)/6
	for y := max(0, py-ry); y <= min(h-1, py+ry); y++ {
		for x := max(0, px-rx); x <= min(w-1, px+rx); x++ {
			dx, dy := float64(x-px), float64(y-py)
			v := float32(math.Exp(-dx*dx/(2*sx*sx) - dy*dy/(2*sy*sy)))
			if x == px && y == py {
				v = 1
			}
			if v > heat[y*w+x] {
				heat[y*w+x] = v
			}
		}
	}
}

// distanceOf turns the box head's raw outputs into distances from a cell's
// anchor to the box's four sides, in input pixels: Stride·e^o, with o
// clamped to ±maxLogDistance so that a wild step cannot overflow. It also
// reports whether o was inside the clamp (where the gradient flows).
func distanceOf(o float32) (float64, bool) {
	v := float64(o)
	if v > maxLogDistance || v < -maxLogDistance {
		v = max(-maxLogDistance, min(maxLogDistance, v))
		return Stride * math.Exp(v), false
	}
	return Stride * math.Exp(v), true
}

const maxLogDistance = 6

// boxLoss is the weighted GIoU loss (Rezatofighi et al. 2019) of the box
// head's raw maps (N×4×H×W) against the targets, normalised by the sum of
// the weights as TTFNet does, and its gradient with respect to the maps.
func boxLoss(raw *tensor, ts []Targets) (float64, *tensor) {
	grad := nn.Like(raw)
	h, w := raw.H, raw.W
	hw := h * w
	var total, wsum float64
	for _, t := range ts {
		for _, v := range t.Weight {
			wsum += float64(v)
		}
	}
	if wsum == 0 {
		return 0, grad
	}
	for n, t := range ts {
		o, g := raw.Image(n), grad.Image(n)
		for j, wt := range t.Weight {
			if wt == 0 {
				continue
			}
			ax, ay := anchor(j%w), anchor(j/w)
			var d [4]float64
			var live [4]bool
			for c := range 4 {
				d[c], live[c] = distanceOf(o[c*hw+j])
			}
			p := [4]float64{ax - d[0], ay - d[1], ax + d[2], ay + d[3]}
			tg := [4]float64{float64(t.Box[j]), float64(t.Box[hw+j]), float64(t.Box[2*hw+j]), float64(t.Box[3*hw+j])}
			l, gp := nn.GIoULoss(p, tg)
			f := float64(wt) / wsum
			total += f * l
			// x0 = ax − d0 and y0 = ay − d1 move against their distance.
			sign := [4]float64{-1, -1, 1, 1}
			for c := range 4 {
				if live[c] {
					g[c*hw+j] = float32(f * gp[c] * sign[c] * d[c])
				}
			}
		}
	}
	return total, grad
}

// Detection is one box the network found, in the input's pixels.
type Detection struct {
	Class int
	Box   project.Box
	Score float64
}

// Decode reads detections from the network's outputs for one image: heat
// (C·H·W probabilities after the sigmoid) and the box head's raw maps
// (4·H·W). A cell is a peak when no neighbour in its 3×3 window is higher
// (the max-pool test of "Objects as Points" in place of NMS); the best topK
// peaks at or above minScore are kept, best first, each with the box its
// cell regresses.
func Decode(heat, box []float32, c, h, w, topK int, minScore float64) []Detection {
	var out []Detection
	hw := h * w
	for k := 0; k < c; k++ {
		p := heat[k*hw : (k+1)*hw]
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				v := p[y*w+x]
				if float64(v) < minScore || !isPeak(p, w, h, x, y) {
					continue
				}
				j := y*w + x
				var d [4]float64
				for c := range 4 {
					d[c], _ = distanceOf(box[c*hw+j])
				}
				ax, ay := anchor(x), anchor(y)
				out = append(out, Detection{Class: k, Score: float64(v),
					Box: project.Box{X0: ax - d[0], Y0: ay - d[1], X1: ax + d[2], Y1: ay + d[3]}})
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
	var in []Detection
	var boxes []project.Box
	var scores []float64
	var classes []int
	for _, d := range ds {
		b := project.Box{X0: d.Box.X0 / scale, Y0: d.Box.Y0 / scale, X1: d.Box.X1 / scale, Y1: d.Box.Y1 / scale}.Clamp(float64(imgW), float64(imgH))
		if b.Width() < 1 || b.Height() < 1 {
			continue
		}
		d.Box = b
		in = append(in, d)
		boxes, scores, classes = append(boxes, b), append(scores, d.Score), append(classes, d.Class)
	}
	out := make([]Detection, 0, len(in))
	for _, i := range suggest.NMSByClass(boxes, scores, classes, nmsIoU) {
		out = append(out, in[i])
	}
	sort.SliceStable(out, func(i, j int) bool { return out[i].Score > out[j].Score })
	return out
}
