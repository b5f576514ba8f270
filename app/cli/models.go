package cli

import (
	"flag"
	"fmt"
	"io"
	"math"
	"strings"
	"text/tabwriter"

	"boxwright/app/ops"
	"boxwright/project"
	"boxwright/suggest/detector/onnxexport"
)

// modelRecord is one model as "models --json" prints it.
type modelRecord struct {
	Name         string           `json:"name"`
	Current      bool             `json:"current"`
	Architecture string           `json:"architecture"`
	Classes      []string         `json:"classes"`
	InputSize    int              `json:"input_size"`
	TrainedOn    string           `json:"trained_on"`
	Seed         uint64           `json:"seed"`
	ValAP50      any              `json:"val_ap50"`
	Epochs       []map[string]any `json:"epochs"`
	Created      string           `json:"created"`
	Updated      string           `json:"updated"`
}

func modelJSON(m project.Model) modelRecord {
	r := modelRecord{Name: m.Name, Current: m.Current, Architecture: m.Architecture, Classes: m.Classes, InputSize: m.InputSize,
		TrainedOn: m.TrainedOn, Seed: m.Seed, ValAP50: ops.Num(m.ValAP50), Epochs: []map[string]any{},
		Created: m.Created.Format("2006-01-02T15:04:05Z07:00"), Updated: m.Updated.Format("2006-01-02T15:04:05Z07:00")}
	for _, e := range m.Epochs {
		r.Epochs = append(r.Epochs, map[string]any{"epoch": e.Epoch, "loss": ops.Num(e.Loss), "val_ap50": ops.Num(e.ValAP50), "seconds": e.Seconds})
	}
	return r
}

// cmdModels lists the detectors stored in the project.
const modelsSynopsis = "models PROJECT.boxw [--use NAME] [--json]\n       boxwright models PROJECT.boxw export [NAME] --out FILE.onnx [--input WxH] [--json]"

func cmdModels(args []string, stdout, stderr io.Writer) error {
	if len(args) >= 2 && args[1] == "export" {
		return cmdModelsExport(args[0], args[2:], stdout)
	}
	fs := flag.NewFlagSet("models", flag.ContinueOnError)
	asJSON := fs.Bool("json", false, "")
	use := fs.String("use", "", "make this model the current one first")
	pos, err := parse(fs, args, 1, 1, modelsSynopsis)
	if err != nil {
		return err
	}
	open := openReading
	if *use != "" {
		open = openCLI
	}
	s, ctx, done, err := open(pos[0])
	if err != nil {
		return err
	}
	defer done()
	if *use != "" {
		if err := s.SetCurrentModel(ctx, *use); err != nil {
			return err
		}
	}
	ms, err := s.Models(ctx)
	if err != nil {
		return err
	}
	if *asJSON {
		recs := []modelRecord{}
		for _, m := range ms {
			recs = append(recs, modelJSON(m))
		}
		return writeJSON(stdout, recs)
	}
	if len(ms) == 0 {
		fmt.Fprintln(stdout, "no trained models in this project")
		return nil
	}
	tw := tabwriter.NewWriter(stdout, 0, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "\tNAME\tVAL AP50\tEPOCHS\tINPUT\tCLASSES\tTRAINED ON")
	for _, m := range ms {
		mark := ""
		if m.Current {
			mark = "*"
		}
		ap := "—"
		if !math.IsNaN(m.ValAP50) {
			ap = fmt.Sprintf("%.3f", m.ValAP50)
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%d\t%d px\t%s\t%s\n", mark, m.Name, ap, len(m.Epochs), m.InputSize, strings.Join(m.Classes, ","), m.TrainedOn)
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	fmt.Fprintln(stdout, "* current model")
	return nil
}

// cmdModelsExport writes a stored model as ONNX with its description.
func cmdModelsExport(projectPath string, args []string, stdout io.Writer) error {
	fs := flag.NewFlagSet("models export", flag.ContinueOnError)
	out := fs.String("out", "", "the ONNX file to write")
	input := fs.String("input", "", "the input frame WxH (multiples of 32; default: the frame of the project's commonest image size)")
	asJSON := fs.Bool("json", false, "")
	pos, err := parse(fs, args, 0, 1, modelsSynopsis)
	if err != nil {
		return err
	}
	if *out == "" {
		return usageError("--out FILE.onnx is required\nusage: boxwright " + modelsSynopsis)
	}
	w, h := 0, 0
	if *input != "" {
		if w, h, err = parseSize("input", *input); err != nil {
			return err
		}
		if w%32 != 0 || h%32 != 0 {
			return usageError(fmt.Sprintf("--input %s: the detector halves its input five times: give multiples of 32", *input))
		}
	}
	name := ""
	if len(pos) == 1 {
		name = pos[0]
	}
	s, ctx, done, err := openReading(projectPath)
	if err != nil {
		return err
	}
	defer done()
	rep, err := ops.ExportModel(ctx, s, name, *out, w, h)
	if err != nil {
		return err
	}
	if *asJSON {
		return writeJSON(stdout, map[string]any{"model": rep.Model, "out": rep.Path, "description": rep.Description, "width": rep.Width, "height": rep.Height,
			"bytes": rep.Bytes, "frame": rep.Frame, "opset": onnxexport.Opset})
	}
	fmt.Fprintf(stdout, "model %s: wrote %s (%d bytes, ONNX opset %d, input %d×%d: %s) and its description %s\n",
		rep.Model, rep.Path, rep.Bytes, onnxexport.Opset, rep.Width, rep.Height, rep.Frame, rep.Description)
	fmt.Fprintln(stdout, "its suggestions carry its mistakes: review them as any model's")
	return nil
}
