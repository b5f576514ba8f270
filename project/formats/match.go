package formats

import (
	"fmt"
	"strings"

	"boxwright/project"
)

// MatchImages checks a dataset's image records against the project's
// images before an import stores anything, with the rules every backend
// keeps: a record of no project image fails the import unless skip (and
// is then listed, "name (where): reason"); two records of one image are
// refused (they would be stored side by side without a word); an import
// that matches nothing fails either way.
func MatchImages(ds *Dataset, m *project.ImageMatcher, skip bool) (unmatched []string, err error) {
	unmatched = []string{}
	first := map[int64]ImageRecord{}
	for _, rec := range ds.Images {
		im, ok, reason := m.Match(rec.Name)
		if !ok {
			unmatched = append(unmatched, fmt.Sprintf("%s (%s): %s", rec.Name, rec.Where, reason))
			continue
		}
		if prev, twice := first[im.ID]; twice {
			return unmatched, project.Explained(project.ErrInvalid, "import (nothing was stored): %s (%s) and %s (%s) are both the project image %s; give each image one record",
				prev.Name, prev.Where, rec.Name, rec.Where, im.Path)
		}
		first[im.ID] = rec
	}
	if n := len(unmatched); n > 0 && !skip {
		count := fmt.Sprintf("%d records match", n)
		if n == 1 {
			count = "1 record matches"
		}
		return unmatched, project.Explained(project.ErrInvalid, "import (nothing was stored): %s no image in the project: %s; add the images (--images DIR) or import the rest with --skip-unmatched",
			count, listSome(unmatched, 5))
	}
	if len(ds.Images) > 0 && len(unmatched) == len(ds.Images) {
		return unmatched, project.Explained(project.ErrInvalid, "import (nothing was stored): none of the file's %d image records matches an image in the project, for example %s",
			len(ds.Images), unmatched[0])
	}
	return unmatched, nil
}

// listSome joins the first n items and says how many more there are.
func listSome(items []string, n int) string {
	if len(items) <= n {
		return strings.Join(items, "; ")
	}
	return strings.Join(items[:n], "; ") + fmt.Sprintf("; and %d more", len(items)-n)
}
