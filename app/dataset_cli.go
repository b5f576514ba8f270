package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"text/tabwriter"

	"boxwright/project"
	"boxwright/project/formats"
	"boxwright/store"
)

func init() {
	commands["import"] = cmdImport
	commands["export"] = cmdExport
}

// importResult is what "boxwright import --json" prints.
type importResult struct {
	project.ImportReport
	ImagesAdded *project.IntakeReport `json:"images_added,omitempty"`
}

// loadDataset reads PATH in the given layout; the text layout needs the
// project's images for their sizes.
func loadDataset(ctx context.Context, s *store.Store, layout formats.Layout, src, classesFile string) (*formats.Dataset, []string, error) {
	switch layout {
	case formats.LayoutJSON:
		ds, err := formats.LoadCornerJSON(src)
		return ds, nil, err
	case formats.LayoutXML:
		ds, err := formats.LoadImageXMLFolder(src)
		return ds, nil, err
	case formats.LayoutText:
		if classesFile == "" {
			classesFile = findClassNames(src)
		}
		ims, err := s.Images(ctx)
		if err != nil {
			return nil, nil, err
		}
		m := project.NewImageMatcher(ims)
		return formats.LoadCentreTextFolder(src, classesFile, func(rel string) (string, int, int, bool, string) {
			im, ok, reason := m.MatchStem(rel)
			return im.Path, im.Width, im.Height, ok, reason
		})
	}
	return nil, nil, usageError(fmt.Sprintf("unknown layout %q: use json (corner/size JSON), xml (per-image XML) or txt (centre-normalised text)", layout))
}

// findClassNames looks for classes.txt in the label folder and its parent.
func findClassNames(src string) string {
	dir := src
	if st, err := os.Stat(src); err == nil && !st.IsDir() {
		dir = filepath.Dir(src)
	}
	for _, d := range []string{dir, filepath.Dir(dir)} {
		p := filepath.Join(d, "classes.txt")
		if _, err := os.Stat(p); err == nil {
			return p
		}
	}
	return filepath.Join(dir, "classes.txt")
}

// importJob is one import, from the command line or the window.
type importJob struct {
	Layout                      formats.Layout
	Src, ClassesFile, ImagesDir string
	Annotator                   string
	Create, Strict              bool
	ClassMap                    map[string]string // file class name → project class name
}

// runImport adds the images folder (if any), reads the labels and imports
// them in one transaction.
func runImport(ctx context.Context, s *store.Store, j importJob) (importResult, error) {
	var res importResult
	if j.ImagesDir != "" {
		rep, err := s.AddImages(ctx, []string{j.ImagesDir}, project.IntakeOptions{})
		if err != nil {
			return res, err
		}
		res.ImagesAdded = &rep
	}
	ds, unreadable, err := loadDataset(ctx, s, j.Layout, j.Src, j.ClassesFile)
	if err != nil {
		return res, err
	}
	rep, err := s.ImportDataset(ctx, ds, project.ImportOptions{Annotator: j.Annotator, CreateClasses: j.Create, Strict: j.Strict, Source: filepath.Base(j.Src),
		ClassMap: j.ClassMap})
	if err != nil {
		return res, err
	}
	rep.Unmatched = append(rep.Unmatched, unreadable...)
	res.ImportReport = rep
	return res, nil
}

// classMapFlag collects repeated --map FROM=TO.
type classMapFlag map[string]string

func (m classMapFlag) String() string { return "" }

func (m classMapFlag) Set(v string) error {
	from, to, ok := strings.Cut(v, "=")
	if !ok || strings.TrimSpace(from) == "" || strings.TrimSpace(to) == "" {
		return fmt.Errorf("--map wants FROM=TO, got %q", v)
	}
	m[strings.TrimSpace(from)] = strings.TrimSpace(to)
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
	asJSON := fs.Bool("json", false, "")
	classMap := classMapFlag{}
	fs.Var(classMap, "map", "")
	const synopsis = "import PROJECT.boxw --layout json|xml|txt [--annotator NAME] PATH [--images DIR] [--classes FILE] [--map FROM=TO]... [--create-classes] [--strict] [--json]"
	pos, err := parse(fs, args, 2, 2, synopsis)
	if err != nil {
		return err
	}
	if *layout == "" {
		return usageError("--layout is required\nusage: boxwright " + synopsis)
	}
	src := pos[1]
	if *annotator == "" {
		*annotator = strings.TrimSuffix(filepath.Base(src), filepath.Ext(src))
	}
	s, ctx, done, err := openCLI(pos[0])
	if err != nil {
		return err
	}
	defer done()
	res, err := runImport(ctx, s, importJob{Layout: formats.Layout(*layout), Src: src, ClassesFile: *classes, ImagesDir: *images,
		Annotator: *annotator, Create: *create, Strict: *strict, ClassMap: classMap})
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
	}
	fmt.Fprintf(stdout, "imported %d labels on %d images for annotator %q; clipped %d boxes to their image\n", rep.Labels, rep.Images, rep.Annotator, rep.Clipped)
	if len(rep.ClassesCreated) > 0 {
		fmt.Fprintf(stdout, "created classes: %s\n", strings.Join(rep.ClassesCreated, ", "))
	}
	if len(rep.Unmatched) > 0 {
		fmt.Fprintf(stdout, "%d records match no project image (add the images with --images DIR):\n", len(rep.Unmatched))
		for i, u := range rep.Unmatched {
			if i == 20 {
				fmt.Fprintf(stdout, "  … and %d more (see --json)\n", len(rep.Unmatched)-20)
				break
			}
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
	seed := fs.Int64("seed", 1, "")
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
	ratios, err := formats.ParseRatios(*split)
	if err != nil {
		return usageError("--split: " + err.Error())
	}
	s, ctx, done, err := openCLI(pos[0])
	if err != nil {
		return err
	}
	defer done()
	rep, classes, err := runExport(ctx, s, *annotator, *out, formats.ExportOptions{Layout: formats.Layout(*layout), Ratios: ratios,
		Seed: *seed, Images: formats.ImageMode(*images)})
	if err != nil {
		return err
	}
	if *asJSON {
		return writeJSON(stdout, rep)
	}
	printExportReport(stdout, rep, classes)
	fmt.Fprintf(stdout, "wrote %s (report in %s)\n", *out, filepath.Join(*out, "report.json"))
	return nil
}

// runExport writes one annotator's labels as a split dataset under out.
func runExport(ctx context.Context, s *store.Store, annotator, out string, opts formats.ExportOptions) (formats.ExportReport, []string, error) {
	a, err := s.AnnotatorByName(ctx, annotator)
	if err != nil {
		return formats.ExportReport{}, nil, err
	}
	classes, imgs, err := s.ExportImages(ctx, a.ID)
	if err != nil {
		return formats.ExportReport{}, nil, err
	}
	if len(imgs) == 0 {
		return formats.ExportReport{}, nil, fmt.Errorf("annotator %q has no labelled images to export", annotator)
	}
	rep, err := formats.Export(ctx, out, classes, imgs, opts)
	return rep, classes, err
}

func printExportReport(w io.Writer, rep formats.ExportReport, classes []string) {
	tw := tabwriter.NewWriter(w, 0, 4, 2, ' ', tabwriter.AlignRight)
	fmt.Fprint(tw, "split\timages\tboxes\t")
	for _, c := range classes {
		fmt.Fprintf(tw, "%s\t", c)
	}
	fmt.Fprintln(tw)
	for _, s := range rep.Splits {
		fmt.Fprintf(tw, "%s\t%d\t%d\t", s.Name, s.Images, s.Boxes)
		for _, c := range classes {
			fmt.Fprintf(tw, "%d\t", s.Classes[c])
		}
		fmt.Fprintln(tw)
	}
	tw.Flush()
}
