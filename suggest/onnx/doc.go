// Package onnx runs a team's own detector, exported as an ONNX model, over
// project images through ONNX Runtime (github.com/yalue/onnxruntime_go;
// the runtime's shared library is loaded at run time, so nothing else
// needs it). A Description says how to feed the model (size, letterbox or
// stretch, channel order, scale, mean and std) and how to read its
// outputs (one of four common layouts); a Runner decodes the outputs,
// maps boxes back through the letterbox to image pixels, applies a minimum
// score and per-class non-maximum suppression, and serves as a
// suggest.Suggester. Sub-package onnxpb is the ONNX file format itself.
package onnx
