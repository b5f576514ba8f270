package ops

import (
	"context"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"text/tabwriter"

	"boxwright/app/backend"
	"boxwright/project"
	"boxwright/project/formats"
)

// ImportResult is what "boxwright import --json" prints.
type ImportResult struct {
	project.ImportReport
	ImagesAdded *project.IntakeReport `json:"images_added,omitempty"`
}

// loadDataset reads PATH in the given layout; the text layout needs the
// project's images for their sizes.
func loadDataset(ctx context.Context, s backend.Project, layout formats.Layout, src, classesFile string) (*formats.Dataset, []string, error) {
	switch layout {
	case formats.LayoutJSON:
		ds, err := formats.LoadCornerJSON(src)
		return ds, nil, err
	case formats.LayoutXML:
		ds, err := formats.LoadImageXMLFolder(src)
		return ds, nil, err
	case formats.LayoutText:
		guessed := classesFile == ""
		if guessed {
			classesFile = findClassNames(src)
		}
		ims, err := s.Images(ctx)
		if err != nil {
			return nil, nil, err
		}
		m := project.NewImageMatcher(ims)
		ds, unmatched, err := formats.LoadCentreTextFolder(src, classesFile, func(rel string) (string, int, int, bool, string) {
			im, ok, reason := m.MatchStem(rel)
			return im.Path, im.Width, im.Height, ok, reason
		})
		if _, statErr := os.Stat(src); guessed && statErr == nil && errors.Is(err, fs.ErrNotExist) {
			err = fmt.Errorf("%w, nor in the folder above: name the class-names file (--classes FILE)", err)
		}
		return ds, unmatched, err
	}
	return nil, nil, UnknownLayout(layout)
}

// UnknownLayout is the error for a layout name that no reader knows.
func UnknownLayout(layout formats.Layout) error {
	return project.Explained(project.ErrInvalid, "unknown layout %q: use json (corner/size JSON), xml (per-image XML) or txt (centre-normalised text)", layout)
}

// KnownLayout says whether labels can be read in the layout.
func KnownLayout(layout formats.Layout) bool {
	return layout == formats.LayoutJSON || layout == formats.LayoutXML || layout == formats.LayoutText
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

// ImportJob is one import, from the command line or the window.
type ImportJob struct {
	Layout                      formats.Layout
	Src, ClassesFile, ImagesDir string
	Annotator                   string
	Create, Strict              bool
	ClassMap                    map[string]string // file class name → project class name
	// SkipUnmatched imports the records whose image is in the project and
	// lists the others; without it they fail the import.
	SkipUnmatched bool
	// Again: what to do with labels imported before from a file of the
	// same name (project.ImportAgain…).
	Again string
}

// RunImport adds the images folder (if any), reads the labels and imports
// them in one transaction. The command is one unit: when the import
// fails, the images it added are taken back.
func RunImport(ctx context.Context, s backend.Project, j ImportJob) (res ImportResult, err error) {
	if j.ImagesDir != "" {
		rep, ierr := s.AddImages(ctx, []string{j.ImagesDir}, project.IntakeOptions{})
		if ierr != nil {
			return res, ierr
		}
		res.ImagesAdded = &rep
		defer func() {
			if err == nil || rep.Added+rep.Relinked == 0 {
				return
			}
			if uerr := s.UndoIntake(context.WithoutCancel(ctx), rep); uerr != nil {
				err = fmt.Errorf("%w; and the %s added from %s could not be taken back: %v", err, Plural(rep.Added, "image"), j.ImagesDir, uerr)
				return
			}
			err = fmt.Errorf("%w (the %s added from %s were taken back)", err, Plural(rep.Added+rep.Relinked, "image"), j.ImagesDir)
		}()
	}
	ds, unreadable, err := loadDataset(ctx, s, j.Layout, j.Src, j.ClassesFile)
	if err != nil {
		return res, err
	}
	if len(unreadable) > 0 && !j.SkipUnmatched {
		return res, project.Explained(project.ErrInvalid, "import (nothing was stored): %s no image in the project, for example %s; add the images (--images DIR) or import the rest with --skip-unmatched",
			Plural(len(unreadable), "label file")+" match", unreadable[0])
	}
	rep, err := s.ImportDataset(ctx, ds, project.ImportOptions{Annotator: j.Annotator, CreateClasses: j.Create, Strict: j.Strict, Source: filepath.Base(j.Src),
		ClassMap: j.ClassMap, SkipUnmatched: j.SkipUnmatched, Again: j.Again})
	if err != nil {
		return res, err
	}
	rep.Unmatched = append(rep.Unmatched, unreadable...)
	res.ImportReport = rep
	return res, nil
}

// RunExport writes one annotator's labels as a split dataset under out.
func RunExport(ctx context.Context, s backend.Project, annotator, out string, opts formats.ExportOptions) (formats.ExportReport, []string, error) {
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

// PrintExportReport writes the counts of an export per split and class as
// a table.
func PrintExportReport(w io.Writer, rep formats.ExportReport, classes []string) {
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
	if rep.Requested == formats.ImagesLink && rep.Copied > 0 {
		fmt.Fprintf(w, "%s could not be linked (another file system?) and were copied; %d linked\n", Plural(rep.Copied, "image"), rep.Linked)
	}
	for _, n := range rep.Notes {
		fmt.Fprintf(w, "note: %s\n", n)
	}
}
