// Package detector is a small one-stage convolutional detector that learns
// from a project's labels on the CPU while people label. It follows
// "Objects as Points" (Zhou, Wang & Krähenbühl 2019) in its outputs: each
// class has a heat map at stride 4 whose peaks are object centres, trained
// with the penalty-reduced focal loss. Its targets and box regression
// follow TTFNet ("Training-Time-Friendly Network for Real-Time Object
// Detection", Liu et al. 2020), whose point is training in a fraction of
// the time: the heat Gaussian is elliptical and scaled to the box (radius
// 0.54·side/2), and every cell near a centre, not only the centre cell,
// regresses the distances to the box's four sides, weighted by the
// Gaussian and trained with the GIoU loss (Rezatofighi et al. 2019).
//
// Why this design: a centre heat map needs no anchor boxes to tune for
// classes no model knows yet, decodes with a 3×3 peak test instead of a
// learned or tuned NMS, and its one-stage, fully convolutional form is
// cheap enough for two laptop cores; the dense regression gives a few
// dozen labelled images many more training samples than one cell per
// object would. The network (net.go) is an encoder of seven
// conv/batch-norm/ReLU stages down to stride 16 (16, 32, 64, 128
// channels), a decoder that upsamples twice and adds the encoder's maps of
// the same stride, and a shared 3×3 trunk with two 1×1 heads. Inputs are
// downscaled so that the long side is one of 256…640 pixels, chosen so
// that the smaller objects keep about 8 input pixels (2 heat-map cells).
//
// Training (train.go) uses Adam with a cosine-decayed learning rate, seeded
// initial weights, augmentation (random crops, flips, scale jitter,
// brightness and contrast; quarter turns when orientation does not matter)
// and a seeded validation split scored after each epoch by project/eval
// (VOC-style AP50). The numerics are in sub-package nn.
package detector
