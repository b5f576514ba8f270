package ops

import (
	"testing"

	"boxwright/suggest/detector/nn"
)

// The learning check on a shortened schedule: six epochs (about 40
// seconds here) instead of five minutes, by epochs rather than time so
// that the result does not depend on the machine's speed, and one thread
// so that it is the same everywhere. Six epochs find most buoys (AP50
// about 0.5) and some boats (0.2 over all classes) on the 10 images the
// model never saw; a break anywhere in targets, losses, gradients,
// decoding or input scaling leaves AP50 near 0. The full check is
// BenchmarkDemoLearning.
func TestDemoLearningShort(t *testing.T) {
	if testing.Short() {
		t.Skip("trains a detector for 40 seconds")
	}
	nn.SetThreads(1)
	defer nn.SetThreads(0)
	d := learnOnDemo(t, 6, 0, false)
	// Early training is noisy (a change in the last bits of the arithmetic
	// moved three epochs from 0.16 to 0.10): the bars leave room for that.
	if d.Detector.MAP < 0.08 {
		t.Errorf("AP50 %.3f on the 10 held-out demo images after 6 epochs, want at least 0.08", d.Detector.MAP)
	}
	for _, c := range d.Detector.Classes {
		if className(d.classes, c.ClassID) == "buoy" && c.AP < 0.3 {
			t.Errorf("buoy AP50 %.3f after 6 epochs, want at least 0.3", c.AP)
		}
	}
}
