package cli

import (
	"flag"
	"fmt"
	"io"
	"strings"
	"time"

	"boxwright/app/backend"
	"boxwright/app/ops"
)

const copySynopsis = "copy FROM TO [--json]   (each a PROJECT.boxw, postgres://USER@HOST/DATABASE or @NAME)"

// cmdCopy copies a whole project into a new one, between any two
// backends, all or nothing (ops.CopyTo), with each stage's progress on
// stderr.
func cmdCopy(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("copy", flag.ContinueOnError)
	asJSON := fs.Bool("json", false, "")
	pos, err := parse(fs, args, 2, 2, copySynopsis)
	if err != nil {
		return err
	}
	from, to := pos[0], pos[1]
	w, err := backend.Locate(to)
	if err != nil {
		return err
	}
	if !w.IsServer() && !strings.HasSuffix(to, backend.Extension) {
		return fmt.Errorf("project file %s should end in %s", to, backend.Extension)
	}
	src, ctx, done, err := openReading(from)
	if err != nil {
		return err
	}
	defer done()
	rep, err := ops.CopyTo(ctx, src, to, ops.CopyOptions{Progress: copyProgress(stderr, time.Now)})
	if err != nil {
		return err
	}
	if *asJSON {
		return writeJSON(stdout, rep)
	}
	fmt.Fprintf(stdout, "copied %s to %s: %d classes, %d annotators, %d images, %d labels, %d suggestions (%d decided), %d models\n",
		rep.From, rep.To, rep.Classes, rep.Annotators, rep.Images, rep.Labels, rep.Suggestions, rep.Decided, rep.Models)
	if rep.ImageDir != "" {
		fmt.Fprintf(stdout, "the image files are in %s (keep them beside the project)\n", rep.ImageDir)
	}
	return nil
}

// copyProgress writes each stage's progress as lineProgress does, one
// printer per stage.
func copyProgress(stderr io.Writer, now func() time.Time) func(stage string, done, total int) {
	printers := map[string]func(done, total int){}
	return func(stage string, done, total int) {
		p, ok := printers[stage]
		if !ok {
			p = lineProgress(stderr, now, stage+" %d / %d")
			printers[stage] = p
		}
		p(done, total)
	}
}
