package nn

import (
	"math"
	"testing"
)

// TestFocalLossByHand works eq. 1 of "Objects as Points" (α = 2, β = 4) by
// hand on four pixels. Source: the paper's formula.
//
//	logit 0,    Y = 1:   p = 1/2, (1−p)²·log p = ¼·log ½           = −0.1732868
//	logit ln 3, Y = 0.5: p = 3/4, (1−Y)⁴·p²·log(1−p) = 1/16·9/16·log ¼ = −0.0487369
//	logit −ln 3, Y = 0:  p = 1/4, p²·log(1−p) = 1/16·log ¾           = −0.0179801
//	logit 20,   Y = 0:   p clamped to 1−1e-4, (1−1e-4)²·log 1e-4     = −9.2084984
//
// One positive, so L = 0.1732868+0.0487369+0.0179801+9.2084984 = 9.4485022.
// At the positive dL/dz = α·p·(1−p)^α·log p − (1−p)^(α+1)
// = 2·½·¼·log ½ − ⅛ = −0.2982868; at the clamped pixel it is 0.
func TestFocalLossByHand(t *testing.T) {
	ln3 := math.Log(3)
	z := New(1, 1, 1, 4, []float64{0, ln3, -ln3, 20})
	y := New(1, 1, 1, 4, []float64{1, 0.5, 0, 0})
	loss, g := FocalLoss(z, y)
	if math.Abs(loss-9.4485022) > 1e-6 {
		t.Errorf("loss = %.7f, by hand 9.4485022", loss)
	}
	if math.Abs(g.Data[0]+0.2982868) > 1e-6 || g.Data[3] != 0 {
		t.Errorf("gradient %v, by hand −0.2982868 at the positive and 0 at the clamp", g.Data)
	}

	// Two positives (p = 1/2 and 3/4) halve the sum:
	// −(¼·log ½ + (¼)²·log ¾)/2 = (0.1732868+0.0179801)/2 = 0.0956335.
	z = New(1, 1, 1, 2, []float64{0, ln3})
	y = New(1, 1, 1, 2, []float64{1, 1})
	if loss, _ := FocalLoss(z, y); math.Abs(loss-0.0956335) > 1e-6 {
		t.Errorf("two positives: loss = %.7f, by hand 0.0956335", loss)
	}

	// No positive: divided by 1, not 0. p = 3/4: −p²·log(1−p) = 9/16·log 4.
	z = New(1, 1, 1, 1, []float64{ln3})
	y = New(1, 1, 1, 1, []float64{0})
	if loss, _ := FocalLoss(z, y); math.Abs(loss-0.7797905) > 1e-6 {
		t.Errorf("no positive: loss = %.7f, by hand 0.7797905", loss)
	}
}

// L = (|1−0.5| + |−2−0| + |0.25−1| + |3−3|)/2 = 3.25/2 = 1.625; unmasked
// errors do not count. Source: eq. 2 of "Objects as Points" (L1 summed
// over the channels at each point, divided by the number of points).
