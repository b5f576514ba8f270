package cli

import (
	"flag"
	"fmt"
	"io"
	"strconv"
	"strings"

	"boxwright/app/ops"
	"boxwright/suggest/detector/nn"
	"boxwright/suggest/onnx"
)

const onnxLayouts = onnx.LayoutDetections + "|" + onnx.LayoutCornersScores + "|" + onnx.LayoutCentreObjectness + "|" + onnx.LayoutCentreScores

// modelFileFlags are detect's flags for an ONNX model file.
type modelFileFlags struct {
	layout, input, names, runtime *string
	letterbox                     *bool
	describe, create, drop        *bool
	limit                         *int
	classMap                      classMapFlag
}

func fileModelFlags(fs *flag.FlagSet) *modelFileFlags {
	f := &modelFileFlags{
		layout:    fs.String("layout", "", "the output layout: auto or "+onnxLayouts),
		input:     fs.String("input", "", "the input size WxH, where the model leaves it open"),
		letterbox: fs.Bool("letterbox", true, "keep the aspect ratio and pad (false: stretch to the input)"),
		names:     fs.String("names", "", "class names, one per line, in the model's output order"),
		runtime:   fs.String("onnxruntime", "", "ONNX Runtime's shared library (default: $"+onnx.RuntimeEnv+", then build/onnxruntime/)"),
		describe:  fs.Bool("describe", false, "write the settings in force to the model's description file beside it"),
		create:    fs.Bool("create-classes", false, "create the model's classes the project lacks"),
		drop:      fs.Bool("drop-unknown", false, "drop the boxes of the model's classes the project lacks"),
		limit:     intIn(fs, "limit", 0, 0, 1<<30, "run on the first N of the images chosen (0: all)"),
		classMap:  classMapFlag{},
	}
	fs.Var(f.classMap, "map", "the model's class FROM is the project's class TO")
	return f
}

// modelFileOnly are the flags that mean nothing for a stored model.
var modelFileOnly = []string{"layout", "input", "letterbox", "names", "onnxruntime", "describe", "create-classes", "drop-unknown", "limit", "map"}

func (f *modelFileFlags) refuseWithStoredModel(fs *flag.FlagSet) error {
	var given []string
	fs.Visit(func(fl *flag.Flag) {
		for _, n := range modelFileOnly {
			if fl.Name == n {
				given = append(given, "--"+n)
			}
		}
	})
	if len(given) > 0 {
		return usageError(fmt.Sprintf("%s apply to an ONNX model file (--model FILE.onnx), not to a model trained in the project", strings.Join(given, ", ")))
	}
	return nil
}

// isModelFile tells an ONNX file from a stored model's name.
func isModelFile(model string) bool {
	return strings.HasSuffix(strings.ToLower(model), ".onnx")
}

// parseSize reads WxH.
func parseSize(flagName, v string) (int, int, error) {
	w, h, ok := strings.Cut(strings.ToLower(v), "x")
	wi, errW := strconv.Atoi(strings.TrimSpace(w))
	hi, errH := strconv.Atoi(strings.TrimSpace(h))
	if !ok || errW != nil || errH != nil || wi < 1 || hi < 1 || wi > 16384 || hi > 16384 {
		return 0, 0, usageError(fmt.Sprintf("--%s %q: give WIDTHxHEIGHT in pixels, e.g. 640x640 (each 1 to 16384)", flagName, v))
	}
	return wi, hi, nil
}

// modelDescription is the model's description file (or the defaults)
// with the flags given on top.
func modelDescription(fs *flag.FlagSet, path string, f *modelFileFlags, minScore, nms float64) (onnx.Description, error) {
	d, err := onnx.DescriptionOf(path)
	if err != nil {
		return d, err
	}
	var ferr error
	fs.Visit(func(fl *flag.Flag) {
		switch fl.Name {
		case "layout":
			d.Output.Layout = *f.layout
		case "input":
			w, h, err := parseSize("input", *f.input)
			if err != nil {
				ferr = err
			}
			d.Input.Width, d.Input.Height = w, h
		case "letterbox":
			d.Input.Resize = "letterbox"
			if !*f.letterbox {
				d.Input.Resize = "stretch"
			}
		case "min-score":
			d.MinScore = minScore
		case "nms":
			d.NMSIoU = nms
			if nms <= 0 {
				d.NMSIoU = -1 // off
			}
		}
	})
	if ferr != nil {
		return d, ferr
	}
	if err := d.Check("the settings for " + path); err != nil {
		return d, usageError(err.Error())
	}
	return d, nil
}

func detectWithModelFile(fs *flag.FlagSet, projectPath, modelPath string, f *modelFileFlags, all bool, minScore, nms float64, save, asJSON bool, threads int, stdout, stderr io.Writer) error {
	if *f.create && *f.drop {
		return usageError("choose --create-classes or --drop-unknown, not both")
	}
	var given []string
	fs.Visit(func(fl *flag.Flag) {
		if fl.Name == "source" {
			given = append(given, "--source")
		}
	})
	if len(given) > 0 {
		return usageError("--source: the suggestions of a model file are named after the file and its version; rename the file to change it")
	}
	d, err := modelDescription(fs, modelPath, f, minScore, nms)
	if err != nil {
		return err
	}
	opt := onnx.OpenOptions{Desc: &d, Runtime: *f.runtime, Threads: threads}
	if *f.names != "" {
		if opt.Names, err = onnx.ReadNames(*f.names); err != nil {
			return err
		}
		opt.NamesFile = *f.names
	}
	nn.SetThreads(threads)
	// The model is checked before the project is opened: a bad model
	// costs nothing and touches nothing.
	m, err := onnx.Open(modelPath, opt)
	if err != nil {
		return err
	}
	defer m.Close()
	if *f.describe {
		keep := m.Desc
		keep.Classes = m.Classes
		if err := keep.Write(onnx.DescriptionPath(modelPath)); err != nil {
			return err
		}
		fmt.Fprintf(stderr, "wrote the model's description to %s\n", onnx.DescriptionPath(modelPath))
	}
	s, ctx, done, err := openCLI(projectPath)
	if err != nil {
		return err
	}
	defer done()
	rep, err := ops.RunModel(ctx, s, ops.ModelRunJob{Model: m, All: all, Limit: *f.limit, Save: save,
		Unknown: ops.UnknownClassRule{Map: f.classMap, Create: *f.create, Drop: *f.drop}})
	for _, why := range rep.Failed {
		fmt.Fprintf(stderr, "skipped image %s\n", why)
	}
	if err != nil {
		return err
	}
	paths := map[int64]string{}
	if ims, err := s.Images(ctx); err == nil {
		for _, im := range ims {
			paths[im.ID] = im.Path
		}
	}
	if asJSON {
		ds := []map[string]any{}
		for _, d := range rep.Detections {
			ds = append(ds, map[string]any{"image": paths[d.ImageID], "class": rep.ClassNames[d.ClassID], "x0": d.Box.X0, "y0": d.Box.Y0, "x1": d.Box.X1, "y1": d.Box.Y1, "score": d.Score})
		}
		out := map[string]any{"model": rep.Model, "source": rep.Source, "layout": rep.Layout, "classes": m.Classes, "classes_from": m.ClassesFrom,
			"runtime": onnx.RuntimeVersion(), "images": rep.Images, "detections": ds, "dropped_unknown_class": rep.Dropped, "saved": save,
			"classes_created": nonNil(rep.ClassesCreated)}
		if save {
			out["replaced_pending"] = rep.Saved.ReplacedPending
		}
		return writeJSON(stdout, out)
	}
	for _, d := range rep.Detections {
		fmt.Fprintf(stdout, "%s\t%s\t%.1f,%.1f,%.1f,%.1f\t%.3f\n", paths[d.ImageID], rep.ClassNames[d.ClassID], d.Box.X0, d.Box.Y0, d.Box.X1, d.Box.Y1, d.Score)
	}
	fmt.Fprintf(stdout, "model %s (layout %s, %d×%d input, classes from %s, ONNX Runtime %s): %s on %s",
		rep.Model, rep.Layout, m.Desc.Input.Width, m.Desc.Input.Height, m.ClassesFrom, onnx.RuntimeVersion(),
		ops.Plural(len(rep.Detections), "detection"), ops.Plural(rep.Images, "image"))
	if rep.Dropped > 0 {
		fmt.Fprintf(stdout, ", %d of unknown classes dropped", rep.Dropped)
	}
	if save {
		fmt.Fprintf(stdout, ", stored as pending suggestions of source %q", rep.Source)
	}
	fmt.Fprintln(stdout)
	if len(rep.ClassesCreated) > 0 {
		fmt.Fprintf(stdout, "new classes: %s\n", strings.Join(rep.ClassesCreated, ", "))
	}
	if rep.Images == 0 && !all {
		fmt.Fprintln(stdout, "every image has labels or is skipped: --images all runs the model on all of them")
	}
	return nil
}
