package cli

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"strings"
	"text/tabwriter"

	"boxwright/app/backend"
	"boxwright/app/ops"
	"boxwright/project"
	"boxwright/store/imagefile"
)

func cmdOpen(args []string, stderr io.Writer, window Window) error {
	fs := flag.NewFlagSet("open", flag.ContinueOnError)
	annotator := fs.String("annotator", "", "label as this annotator (created when new); skips the question")
	pos, err := parse(fs, args, 1, 1, "open PROJECT.boxw [--annotator NAME]")
	if err != nil {
		return err
	}
	// Fail here, with a plain message, rather than in an empty window. A
	// project that cannot be written (permissions, damage) still opens
	// for looking, and the window says why editing is off.
	s, err := backend.Open(pos[0])
	if errors.Is(err, project.ErrReadOnly) || errors.Is(err, project.ErrDamaged) {
		s, err = backend.OpenForReading(pos[0])
	}
	if err != nil {
		return err
	}
	s.Close()
	if *annotator != "" {
		if err := project.ValidateName("annotator", *annotator); err != nil {
			return usageError(fmt.Sprintf("--annotator %q: %v", *annotator, err))
		}
	}
	if code := window(pos[0], *annotator, stderr); code != 0 {
		return errWindowSaidWhy
	}
	return nil
}

func cmdNew(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("new", flag.ContinueOnError)
	pos, err := parse(fs, args, 1, 1, "new PROJECT.boxw | new postgres://USER@HOST/DATABASE | new @NAME")
	if err != nil {
		return err
	}
	w, err := backend.Locate(pos[0])
	if err != nil {
		return err
	}
	if !w.IsServer() && !strings.HasSuffix(pos[0], backend.Extension) {
		return fmt.Errorf("project file %s should end in %s", pos[0], backend.Extension)
	}
	s, err := backend.Create(pos[0])
	if err != nil {
		return err
	}
	name := pos[0]
	if w.IsServer() {
		name = s.Path() // without its password
	}
	fmt.Fprintf(stdout, "created %s\n", name)
	return s.Close()
}

func printIntake(stdout io.Writer, rep project.IntakeReport, asJSON bool) error {
	if asJSON {
		return writeJSON(stdout, rep)
	}
	fmt.Fprintf(stdout, "added %d, duplicates %d, relinked %d, failed %d\n", rep.Added, rep.Duplicates, rep.Relinked, len(rep.Failed))
	for _, f := range rep.Failed {
		fmt.Fprintf(stdout, "  skipped %s: %s\n", f.Path, strings.TrimPrefix(f.Error, f.Path+": "))
	}
	return nil
}

func cmdAddImages(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("add-images", flag.ContinueOnError)
	asJSON := fs.Bool("json", false, "")
	mp := floatAbove(fs, "max-megapixels", float64(imagefile.DefaultMaxPixels)/1e6, 0, 10000, "")
	pos, err := parse(fs, args, 2, -1, "add-images PROJECT.boxw PATH... [--max-megapixels N] [--json]")
	if err != nil {
		return err
	}
	s, ctx, done, err := openCLI(pos[0])
	if err != nil {
		return err
	}
	defer done()
	rep, err := s.AddImages(ctx, pos[1:], project.IntakeOptions{MaxPixels: int64(*mp * 1e6), Progress: progressPrinter(stderr, asJSON)})
	if perr := printIntake(stdout, rep, *asJSON); perr != nil {
		return perr
	}
	if err == nil && rep.Added+rep.Duplicates+rep.Relinked == 0 && len(rep.Failed) > 0 {
		// Nothing named could be taken: a script must not read that as
		// success.
		return fmt.Errorf("nothing was added: every path given failed (%s)", ops.Plural(len(rep.Failed), "file"))
	}
	return err
}

func cmdRelink(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("relink", flag.ContinueOnError)
	asJSON := fs.Bool("json", false, "")
	pos, err := parse(fs, args, 2, 2, "relink PROJECT.boxw FOLDER [--json]")
	if err != nil {
		return err
	}
	// A folder that is not there (or is a file) would find nothing and
	// report "relinked 0" as if it had been searched.
	if st, err := os.Stat(pos[1]); errors.Is(err, os.ErrNotExist) {
		return fmt.Errorf("folder %s does not exist: give the folder to search for the moved images", pos[1])
	} else if err != nil {
		return fmt.Errorf("folder %s: %w", pos[1], err)
	} else if !st.IsDir() {
		return fmt.Errorf("%s is not a folder: give the folder to search for the moved images", pos[1])
	}
	s, ctx, done, err := openCLI(pos[0])
	if err != nil {
		return err
	}
	defer done()
	rep, err := s.Relink(ctx, pos[1], project.IntakeOptions{})
	if err != nil {
		return err
	}
	missing, err := s.MissingImages(ctx)
	if err != nil {
		return err
	}
	if *asJSON {
		return writeJSON(stdout, map[string]any{"relinked": rep.Relinked, "still_missing": len(missing), "failed": rep.Failed})
	}
	fmt.Fprintf(stdout, "relinked %d, still missing %d\n", rep.Relinked, len(missing))
	for _, f := range rep.Failed {
		fmt.Fprintf(stdout, "  skipped %s: %s\n", f.Path, strings.TrimPrefix(f.Error, f.Path+": "))
	}
	return nil
}

func cmdClasses(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("classes", flag.ContinueOnError)
	asJSON := fs.Bool("json", false, "")
	const synopsis = "classes PROJECT.boxw list|add NAME...|rename OLD NEW|merge FROM INTO|delete NAME"
	pos, err := parse(fs, args, 2, -1, synopsis)
	if err != nil {
		return err
	}
	// The action and its arguments are checked before the project is
	// opened: a usage mistake is one whatever the file.
	want := map[string]int{"list": 0, "rename": 2, "merge": 2, "delete": 1}
	if n, ok := want[pos[1]]; ok && len(pos)-2 != n {
		return usageError("usage: boxwright " + synopsis)
	} else if !ok && pos[1] != "add" {
		return usageError(fmt.Sprintf("unknown classes action %q\nusage: boxwright %s", pos[1], synopsis))
	} else if pos[1] == "add" && len(pos) == 2 {
		return usageError("usage: boxwright classes PROJECT.boxw add NAME...")
	}
	open := openCLI
	if pos[1] == "list" {
		open = openReading
	}
	s, ctx, done, err := open(pos[0])
	if err != nil {
		return err
	}
	defer done()
	verb, rest := pos[1], pos[2:]
	need := func(n int) error {
		if len(rest) != n {
			return usageError("usage: boxwright " + synopsis)
		}
		return nil
	}
	switch verb {
	case "list":
		if err := need(0); err != nil {
			return err
		}
		return listClasses(ctx, s, stdout, *asJSON)
	case "add":
		if len(rest) == 0 {
			return usageError("usage: boxwright classes PROJECT.boxw add NAME...")
		}
		// All or nothing: every name is checked before the first is added.
		known, err := s.Classes(ctx)
		if err != nil {
			return err
		}
		exists, given := map[string]bool{}, map[string]bool{}
		for _, c := range known {
			exists[c.Name] = true
		}
		for _, name := range rest {
			switch err := project.ValidateName("class", name); {
			case err != nil:
				return usageError(err.Error() + " (no class was added)")
			case given[name]:
				return usageError(fmt.Sprintf("class %q is given twice (no class was added)", name))
			case exists[name]:
				return fmt.Errorf("class %q already exists (no class was added)", name)
			}
			given[name] = true
		}
		for _, name := range rest {
			c, err := s.AddClass(ctx, project.Class{Name: name})
			if err != nil {
				return err
			}
			fmt.Fprintf(stdout, "added class %q (key %s, colour %s)\n", c.Name, c.HotKey, project.FormatColor(c.Color))
		}
	case "rename":
		if err := need(2); err != nil {
			return err
		}
		if err := s.RenameClass(ctx, rest[0], rest[1]); err != nil {
			return err
		}
		fmt.Fprintf(stdout, "renamed class %q to %q; its labels kept it\n", rest[0], rest[1])
	case "merge":
		if err := need(2); err != nil {
			return err
		}
		if err := s.MergeClass(ctx, rest[0], rest[1]); err != nil {
			return err
		}
		fmt.Fprintf(stdout, "merged class %q into %q\n", rest[0], rest[1])
	case "delete":
		if err := need(1); err != nil {
			return err
		}
		c, err := s.ClassByName(ctx, rest[0])
		if err != nil {
			return err
		}
		if err := s.DeleteClass(ctx, c.ID, project.DeleteClassOptions{}); err != nil {
			if errors.Is(err, project.ErrInUse) {
				return fmt.Errorf("%w (use: boxwright classes %s merge %q OTHER)", err, pos[0], rest[0])
			}
			return err
		}
		fmt.Fprintf(stdout, "deleted class %q\n", rest[0])
	default:
		return usageError(fmt.Sprintf("unknown classes action %q\nusage: boxwright %s", verb, synopsis))
	}
	return nil
}

func listClasses(ctx context.Context, s backend.Project, stdout io.Writer, asJSON bool) error {
	cs, err := s.Classes(ctx)
	if err != nil {
		return err
	}
	counts, err := s.Counts(ctx)
	if err != nil {
		return err
	}
	n := map[int64]int{}
	for _, c := range counts.LabelsByClass {
		n[c.ID] = c.Count
	}
	type row struct {
		Name   string `json:"name"`
		Color  string `json:"color"`
		Key    string `json:"key"`
		Labels int    `json:"labels"`
	}
	rows := []row{}
	for _, c := range cs {
		rows = append(rows, row{c.Name, project.FormatColor(c.Color), c.HotKey, n[c.ID]})
	}
	if asJSON {
		return writeJSON(stdout, rows)
	}
	tw := tabwriter.NewWriter(stdout, 0, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "KEY\tCLASS\tCOLOUR\tLABELS")
	for _, r := range rows {
		fmt.Fprintf(tw, "%s\t%s\t%s\t%d\n", r.Key, r.Name, r.Color, r.Labels)
	}
	return tw.Flush()
}

// infoReport is the JSON shape of "boxwright info".
type infoReport struct {
	Images         int                             `json:"images"`
	Classes        []namedCount                    `json:"classes"`
	Annotators     []namedCount                    `json:"annotators"`
	Labels         int                             `json:"labels"`
	Suggestions    map[project.SuggestionState]int `json:"suggestions"`
	ImagesByStatus map[project.ImageStatus]int     `json:"images_by_status"`
	// StatusByAnnotator counts each annotator's images by their own status.
	StatusByAnnotator map[string]map[project.ImageStatus]int `json:"images_by_annotator_status"`
	MissingFiles      int                                    `json:"missing_files"`
	SchemaVersion     int                                    `json:"schema_version"`
}

type namedCount struct {
	Name   string `json:"name"`
	Labels int    `json:"labels"`
}

func named(ns []project.NamedCount) []namedCount {
	out := []namedCount{}
	for _, n := range ns {
		out = append(out, namedCount{n.Name, n.Count})
	}
	return out
}

func cmdInfo(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("info", flag.ContinueOnError)
	asJSON := fs.Bool("json", false, "")
	pos, err := parse(fs, args, 1, 1, "info PROJECT.boxw [--json]")
	if err != nil {
		return err
	}
	s, ctx, done, err := openReading(pos[0])
	if err != nil {
		return err
	}
	defer done()
	c, err := s.Counts(ctx)
	if err != nil {
		return err
	}
	missing, err := s.MissingImages(ctx)
	if err != nil {
		return err
	}
	version, err := s.SchemaVersion(ctx)
	if err != nil {
		return err
	}
	r := infoReport{Images: c.Images, Classes: named(c.LabelsByClass), Annotators: named(c.LabelsByAnnotator), Labels: c.Labels,
		Suggestions: c.Suggestions, ImagesByStatus: c.ImagesBy, StatusByAnnotator: c.StatusByAnnotator, MissingFiles: len(missing),
		SchemaVersion: version}
	if *asJSON {
		return writeJSON(stdout, r)
	}
	fmt.Fprintf(stdout, "%s\n", s.Path())
	fmt.Fprintf(stdout, "images: %d (by the furthest any annotator has come:", r.Images)
	for _, st := range project.ImageStatuses {
		fmt.Fprintf(stdout, " %s %d", st, r.ImagesByStatus[st])
	}
	fmt.Fprintln(stdout, ")")
	if r.MissingFiles > 0 {
		fmt.Fprintf(stdout, "missing files: %d (find them with: boxwright relink %s FOLDER)\n", r.MissingFiles, pos[0])
	}
	fmt.Fprintf(stdout, "labels: %d\n", r.Labels)
	for _, n := range r.Classes {
		fmt.Fprintf(stdout, "  class %-20s %d\n", n.Name, n.Labels)
	}
	for _, n := range r.Annotators {
		fmt.Fprintf(stdout, "  annotator %-16s %s; images", n.Name, ops.Plural(n.Labels, "label"))
		for _, st := range project.ImageStatuses {
			fmt.Fprintf(stdout, " %s %d", st, r.StatusByAnnotator[n.Name][st])
		}
		fmt.Fprintln(stdout)
	}
	fmt.Fprintf(stdout, "suggestions:")
	for _, st := range project.SuggestionStates {
		fmt.Fprintf(stdout, " %s %d", st, r.Suggestions[st])
	}
	fmt.Fprintln(stdout)
	return nil
}

type imageRecord struct {
	ID          int64  `json:"id"`
	Path        string `json:"path"`
	Width       int    `json:"width"`
	Height      int    `json:"height"`
	Orientation int    `json:"orientation"`
	SHA256      string `json:"sha256"`
	Status      string `json:"status"`
}

func cmdImages(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("images", flag.ContinueOnError)
	asJSON := fs.Bool("json", false, "")
	annotator := fs.String("annotator", "", "")
	pos, err := parse(fs, args, 1, 1, "images PROJECT.boxw [--annotator NAME] [--json]")
	if err != nil {
		return err
	}
	s, ctx, done, err := openReading(pos[0])
	if err != nil {
		return err
	}
	defer done()
	var ims []project.Image
	if *annotator != "" {
		a, err := s.AnnotatorByName(ctx, *annotator)
		if err != nil {
			return err
		}
		ims, err = s.ImagesFor(ctx, a.ID)
		if err != nil {
			return err
		}
	} else if ims, err = s.Images(ctx); err != nil {
		return err
	}
	recs := []imageRecord{}
	for _, im := range ims {
		recs = append(recs, imageRecord{im.ID, im.Path, im.Width, im.Height, im.Orientation, im.SHA256, string(im.Status)})
	}
	if *asJSON {
		return writeJSON(stdout, recs)
	}
	tw := tabwriter.NewWriter(stdout, 0, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "ID\tSTATUS\tSIZE\tORIENT\tSHA-256\tPATH")
	for _, r := range recs {
		fmt.Fprintf(tw, "%d\t%s\t%dx%d\t%d\t%.12s\t%s\n", r.ID, r.Status, r.Width, r.Height, r.Orientation, r.SHA256, r.Path)
	}
	return tw.Flush()
}

// cmdCheck runs the storage's full consistency check: the file's every
// page and index, and every reference between rows. It only reads.
func cmdCheck(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("check", flag.ContinueOnError)
	pos, err := parse(fs, args, 1, 1, "check PROJECT.boxw")
	if err != nil {
		return err
	}
	s, ctx, done, err := opened(backend.OpenForReading(pos[0]))
	if err != nil {
		return err
	}
	defer done()
	found, err := s.Check(ctx)
	if err != nil {
		return err
	}
	if len(found) == 0 && s.Damage() == "" {
		fmt.Fprintf(stdout, "%s: sound (every page, index and reference checked)\n", pos[0])
		return nil
	}
	if s.Damage() != "" && len(found) == 0 {
		found = []string{s.Damage()}
	}
	for _, f := range found {
		fmt.Fprintf(stdout, "%s: %s\n", pos[0], f)
	}
	return backend.Damaged(pos[0], fmt.Sprintf("the check found %s", ops.Plural(len(found), "problem")))
}

// cmdRecover copies what can still be read of a damaged project into a
// new one; the damaged file is only read.
func cmdRecover(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("recover", flag.ContinueOnError)
	pos, err := parse(fs, args, 2, 2, "recover DAMAGED.boxw NEW.boxw")
	if err != nil {
		return err
	}
	ctx, stop := interruptible()
	defer stop()
	report, err := backend.Recover(ctx, pos[0], pos[1])
	if err != nil {
		return err
	}
	lost := false
	for _, t := range report {
		line := fmt.Sprintf("%-12s %s copied", t.Table, ops.Plural(t.Copied, "row"))
		if len(t.Unreadable) > 0 {
			lost = true
			line += "; unreadable ids " + strings.Join(t.Unreadable, ", ")
		}
		if t.Dropped > 0 {
			lost = true
			line += fmt.Sprintf("; %d left out (they referred to lost rows or repeated a unique value)", t.Dropped)
		}
		fmt.Fprintln(stdout, line)
	}
	if lost {
		fmt.Fprintf(stdout, "%s holds everything that could be read; what is listed above was lost\n", pos[1])
	} else {
		fmt.Fprintf(stdout, "%s holds every row of %s\n", pos[1], pos[0])
	}
	return nil
}
