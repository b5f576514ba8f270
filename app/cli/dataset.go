package cli

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strings"

	"boxwright/app/ops"
	"boxwright/project"
	"boxwright/project/formats"
)

// classMapFlag collects repeated --map FROM=TO.
type classMapFlag map[string]string

func (m classMapFlag) String() string { return "" }

// repeatable: --map may be given once per class.
func (m classMapFlag) repeatable() {}

func (m classMapFlag) Set(v string) error {
	from, to, ok := strings.Cut(v, "=")
	if !ok || strings.TrimSpace(from) == "" || strings.TrimSpace(to) == "" {
		return fmt.Errorf("--map wants FROM=TO, got %q", v)
	}
	from, to = strings.TrimSpace(from), strings.TrimSpace(to)
	if old, twice := m[from]; twice && old != to {
		return fmt.Errorf("--map maps %q twice, to %q and to %q: give one", from, old, to)
	}
	m[from] = to
	return nil
}

func cmdImport(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("import", flag.ContinueOnError)
	layout := fs.String("layout", "", "")
	annotator := fs.String("annotator", "", "")
	images := fs.String("images", "", "")
	classes := fs.String("classes", "", "")
	strict := fs.Bool("strict", false, "")
	create := fs.Bool("create-classes", false, "")
	skip := fs.Bool("skip-unmatched", false, "")
	again := fs.String("again", "refuse", "")
	asJSON := fs.Bool("json", false, "")
	classMap := classMapFlag{}
	fs.Var(classMap, "map", "")
	const synopsis = "import PROJECT.boxw --layout json|xml|txt [--annotator NAME] PATH [--images DIR] [--classes FILE] [--map FROM=TO]... [--create-classes] [--strict] [--skip-unmatched] [--again refuse|replace|append] [--json]"
	pos, err := parse(fs, args, 2, 2, synopsis)
	if err != nil {
		return err
	}
	switch *again {
	case "refuse":
		*again = project.ImportAgainRefuse
	case project.ImportAgainReplace, project.ImportAgainAppend:
	default:
		return usageError(fmt.Sprintf("--again %q: give refuse, replace or append\nusage: boxwright %s", *again, synopsis))
	}
	if *layout == "" {
		return usageError("--layout is required\nusage: boxwright " + synopsis)
	}
	if !ops.KnownLayout(formats.Layout(*layout)) {
		return usageError(ops.UnknownLayout(formats.Layout(*layout)).Error())
	}
	src := pos[1]
	if *annotator == "" {
		*annotator = strings.TrimSuffix(filepath.Base(src), filepath.Ext(src))
	}
	// --images must be a folder: anything else used to be "skipped 1"
	// while the labels were imported without the images meant for them.
	if *images != "" {
		if st, err := os.Stat(*images); errors.Is(err, os.ErrNotExist) {
			return fmt.Errorf("--images %s: no such folder (nothing was imported)", *images)
		} else if err != nil {
			return fmt.Errorf("--images %s: %w (nothing was imported)", *images, err)
		} else if !st.IsDir() {
			return fmt.Errorf("--images %s is %s, not a folder of images (nothing was imported)", *images, formats.Kind(st.Mode()))
		}
	}
	s, ctx, done, err := openCLI(pos[0])
	if err != nil {
		return err
	}
	defer done()
	res, err := ops.RunImport(ctx, s, ops.ImportJob{Layout: formats.Layout(*layout), Src: src, ClassesFile: *classes, ImagesDir: *images,
		Annotator: *annotator, Create: *create, Strict: *strict, ClassMap: classMap, SkipUnmatched: *skip, Again: *again})
	if err != nil {
		return err
	}
	rep := res.ImportReport
	if *asJSON {
		return writeJSON(stdout, res)
	}
	if res.ImagesAdded != nil {
		fmt.Fprintf(stdout, "images: added %d, already known %d, relinked %d, skipped %d\n", res.ImagesAdded.Added,
			res.ImagesAdded.Duplicates, res.ImagesAdded.Relinked, len(res.ImagesAdded.Failed))
		for _, f := range res.ImagesAdded.Failed {
			fmt.Fprintf(stdout, "  skipped %s: %s\n", f.Path, strings.TrimPrefix(f.Error, f.Path+": "))
		}
	}
	fmt.Fprintf(stdout, "imported %s on %s for annotator %q; clipped %s at the image edge\n", ops.Plural(rep.Labels, "label"), ops.Plural(rep.Images, "image"), rep.Annotator, ops.Plural(rep.Clipped, "box"))
	if rep.Replaced > 0 {
		fmt.Fprintf(stdout, "replaced %s imported before on these images\n", ops.Plural(rep.Replaced, "label"))
	}
	if len(rep.ClassesCreated) > 0 {
		fmt.Fprintf(stdout, "created classes: %s\n", strings.Join(rep.ClassesCreated, ", "))
	}
	if len(rep.Unmatched) > 0 {
		fmt.Fprintf(stdout, "skipped %s matching no project image (--skip-unmatched):\n", ops.Plural(len(rep.Unmatched), "record"))
		for _, u := range rep.Unmatched {
			fmt.Fprintf(stdout, "  %s\n", u)
		}
	}
	return nil
}

func cmdExport(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("export", flag.ContinueOnError)
	layout := fs.String("layout", "", "")
	annotator := fs.String("annotator", "", "")
	out := fs.String("out", "", "")
	split := fs.String("split", "80/10/10", "")
	seed := seedIn(fs, "seed", 1, "")
	images := fs.String("images", "copy", "")
	asJSON := fs.Bool("json", false, "")
	const synopsis = "export PROJECT.boxw --layout json|xml|txt --annotator NAME --out DIR [--split 80/10/10] [--seed N] [--images copy|link|none] [--json]"
	pos, err := parse(fs, args, 1, 1, synopsis)
	if err != nil {
		return err
	}
	if *layout == "" || *annotator == "" || *out == "" {
		return usageError("--layout, --annotator and --out are required\nusage: boxwright " + synopsis)
	}
	if !slices.Contains([]string{"json", "xml", "txt"}, *layout) {
		return usageError(fmt.Sprintf("--layout %q: use json (corner/size JSON), xml (per-image XML) or txt (centre-normalised text)", *layout))
	}
	if !slices.Contains([]string{"copy", "link", "none"}, *images) {
		return usageError(fmt.Sprintf("--images %q: use copy, link or none", *images))
	}
	ratios, err := formats.ParseRatios(*split)
	if err != nil {
		return usageError("--split: " + err.Error())
	}
	s, ctx, done, err := openReading(pos[0])
	if err != nil {
		return err
	}
	defer done()
	rep, classes, err := ops.RunExport(ctx, s, *annotator, *out, formats.ExportOptions{Layout: formats.Layout(*layout), Ratios: ratios,
		Seed: *seed, Images: formats.ImageMode(*images)})
	if err != nil {
		return err
	}
	if *asJSON {
		return writeJSON(stdout, rep)
	}
	ops.PrintExportReport(stdout, rep, classes)
	fmt.Fprintf(stdout, "wrote %s (report in %s)\n", *out, filepath.Join(*out, "report.json"))
	return nil
}
