package cli

import (
	"flag"
	"fmt"
	"io"
	"slices"
	"strings"

	"boxwright/app/backend"
	"boxwright/app/ops"
	"boxwright/project"
)

// cmdAssign hands a server project's images out: each image to k of the
// annotators named (k = 1: disjoint batches; k = all of them: everyone
// labels everything, for an agreement study), or shows who has what.
func cmdAssign(args []string, stdout, stderr io.Writer) error {
	const synopsis = "assign PROJECT --annotators A,B[,C...] [--each K] | assign PROJECT --show"
	fs := flag.NewFlagSet("assign", flag.ContinueOnError)
	names := fs.String("annotators", "", "")
	each := intIn(fs, "each", 1, 1, 1000, "")
	show := fs.Bool("show", false, "")
	pos, err := parse(fs, args, 1, 1, synopsis)
	if err != nil {
		return err
	}
	var who []string
	if !*show {
		who = splitNames(*names)
		if len(who) == 0 {
			return usageError("give the annotators to hand the images to: --annotators A,B[,C…]\nusage: boxwright " + synopsis)
		}
		for i, n := range who {
			if slices.Contains(who[:i], n) {
				return usageError(fmt.Sprintf("--annotators names %q twice", n))
			}
		}
		if *each > len(who) {
			return usageError(fmt.Sprintf("--each %d: give at most the %d annotators named\nusage: boxwright %s", *each, len(who), synopsis))
		}
	}
	s, ctx, done, err := openCLI(pos[0])
	if err != nil {
		return err
	}
	defer done()
	a, ok := s.(backend.Assigner)
	if !ok {
		return project.Explained(project.ErrInvalid, "%s is a project file: images are handed out in a server project (postgres://… or @NAME)", pos[0])
	}
	anns, err := s.Annotators(ctx)
	if err != nil {
		return err
	}
	byName, byID := map[string]int64{}, map[int64]string{}
	for _, x := range anns {
		byName[x.Name], byID[x.ID] = x.ID, x.Name
	}
	var plan map[int64][]int64
	if *show {
		if plan, err = a.Assignments(ctx); err != nil {
			return err
		}
	} else {
		var ids []int64
		for _, n := range who {
			id, ok := byName[n]
			if !ok {
				return fmt.Errorf("annotator %q is not in the project (boxwright team … add %s)", n, n)
			}
			ids = append(ids, id)
		}
		ims, err := s.Images(ctx)
		if err != nil {
			return err
		}
		imageIDs := make([]int64, len(ims))
		for i, im := range ims {
			imageIDs[i] = im.ID
		}
		if plan, err = a.Assign(ctx, imageIDs, ids, *each); err != nil {
			return err
		}
	}
	count := map[string]int{}
	for _, to := range plan {
		for _, id := range to {
			count[byID[id]]++
		}
	}
	var lines []string
	for n, c := range count {
		lines = append(lines, fmt.Sprintf("%-20s %s", n, ops.Plural(c, "image")))
	}
	slices.Sort(lines)
	fmt.Fprintf(stdout, "%s assigned\n%s\n", ops.Plural(len(plan), "image"), strings.Join(lines, "\n"))
	return nil
}
