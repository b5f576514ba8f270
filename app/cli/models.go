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
func cmdModels(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("models", flag.ContinueOnError)
	asJSON := fs.Bool("json", false, "")
	use := fs.String("use", "", "make this model the current one first")
	pos, err := parse(fs, args, 1, 1, "models PROJECT.boxw [--use NAME] [--json]")
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
