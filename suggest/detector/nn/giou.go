package nn

// giouEps keeps the ratios finite for degenerate boxes (the value
// torchvision's generalized_box_iou_loss uses).
const giouEps = 1e-7

// GIoULoss is 1 − GIoU of a predicted and a target box, each as corners
// (x0, y0, x1, y1), after "Generalized Intersection over Union"
// (Rezatofighi et al. 2019, Algorithm 1): GIoU = IoU − |C∖(A∪B)| / |C|,
// with C the smallest box enclosing both. Unlike 1 − IoU it still has a
// gradient when the boxes do not overlap. It returns the loss and its
// gradient with respect to the predicted corners; where a min or max
// ties, the gradient goes to the target's side (none to the prediction).
func GIoULoss(p, t [4]float64) (float64, [4]float64) {
	pw, ph := p[2]-p[0], p[3]-p[1]
	ap := pw * ph
	at := (t[2] - t[0]) * (t[3] - t[1])
	// Intersection, and which predicted sides bound it.
	ix0, ix1 := max(p[0], t[0]), min(p[2], t[2])
	iy0, iy1 := max(p[1], t[1]), min(p[3], t[3])
	iw, ih := max(0, ix1-ix0), max(0, iy1-iy0)
	inter := iw * ih
	union := ap + at - inter + giouEps
	// Enclosing box.
	cw := max(p[2], t[2]) - min(p[0], t[0])
	ch := max(p[3], t[3]) - min(p[1], t[1])
	enc := cw*ch + giouEps
	loss := 2 - inter/union - union/enc

	dAp := [4]float64{-ph, -pw, ph, pw}
	var dI, dC [4]float64
	if iw > 0 && ih > 0 {
		if p[0] > t[0] {
			dI[0] = -ih
		}
		if p[2] < t[2] {
			dI[2] = ih
		}
		if p[1] > t[1] {
			dI[1] = -iw
		}
		if p[3] < t[3] {
			dI[3] = iw
		}
	}
	if p[0] < t[0] {
		dC[0] = -ch
	}
	if p[2] > t[2] {
		dC[2] = ch
	}
	if p[1] < t[1] {
		dC[1] = -cw
	}
	if p[3] > t[3] {
		dC[3] = cw
	}
	var g [4]float64
	for i := range g {
		dU := dAp[i] - dI[i]
		dIoU := (dI[i]*union - inter*dU) / (union * union)
		dUC := (dU*enc - union*dC[i]) / (enc * enc)
		g[i] = -dIoU - dUC
	}
	return loss, g
}
