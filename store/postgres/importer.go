package postgres

import (
	"context"
	"errors"
	"fmt"
	"strings"

	"github.com/jackc/pgx/v5"

	"boxwright/project"
	"boxwright/project/formats"
)

// ImportDataset stores the dataset's boxes as labels of one annotator, in
// one transaction: any bad record rolls everything back and the error
// names it. Records whose image is not in the project fail the import
// unless opts.SkipUnmatched (then they are reported, not imported);
// boxes reaching outside their image are clipped and counted (refused
// when opts.Strict). The labels go to the server in multi-row INSERTs.
// The rules are those of the file backend (store.ImportDataset).
func (s *Store) ImportDataset(ctx context.Context, ds *formats.Dataset, opts project.ImportOptions) (project.ImportReport, error) {
	rep := project.ImportReport{Annotator: opts.Annotator, ClassesCreated: []string{}, Unmatched: []string{}}
	if err := project.ValidateName("annotator", opts.Annotator); err != nil {
		return rep, project.Explained(project.ErrInvalid, "import: %v", err)
	}
	ims, err := s.importImages(ctx)
	if err != nil {
		return rep, err
	}
	matcher := project.NewImageMatcher(ims)
	// Nothing is stored unless the records match the project's images
	// (formats.MatchImages says the rules).
	if rep.Unmatched, err = formats.MatchImages(ds, matcher, opts.SkipUnmatched); err != nil {
		return rep, err
	}
	err = s.tx(ctx, func(tx pgx.Tx) error {
		classID, err := classIDs(ctx, tx)
		if err != nil {
			return err
		}
		annID, err := ensureAnnotatorTx(ctx, s, tx, opts.Annotator)
		if err != nil {
			return err
		}
		var covered []int64
		for _, rec := range ds.Images {
			if im, ok, _ := matcher.Match(rec.Name); ok {
				covered = append(covered, im.ID)
			}
		}
		prior, err := againRule(ctx, s, tx, annID, covered, opts, &rep)
		if err != nil {
			return err
		}
		repeats, firstRepeat := 0, ""
		rows := &labelRows{}
		for i, rec := range ds.Images {
			if i%1000 == 0 && ctx.Err() != nil {
				return ctx.Err()
			}
			im, ok, _ := matcher.Match(rec.Name)
			if !ok {
				continue // listed in rep.Unmatched above
			}
			if rec.Width > 0 && rec.Height > 0 && (rec.Width != im.Width || rec.Height != im.Height) {
				return fmt.Errorf("%s: image %s is %d×%d in the file but %d×%d in the project; is it the same image?",
					rec.Where, rec.Name, rec.Width, rec.Height, im.Width, im.Height)
			}
			rep.Images++
			for _, b := range rec.Boxes {
				if to, ok := opts.ClassMap[b.Class]; ok {
					b.Class = to
				}
				id, ok := classID[b.Class]
				if !ok {
					if !opts.CreateClasses {
						return fmt.Errorf("%s: class %q is not in the project (create missing classes, or add it first)", b.Where, b.Class)
					}
					if id, err = importClassTx(ctx, s, tx, b.Class, len(classID)); err != nil {
						return fmt.Errorf("%s: %w", b.Where, err)
					}
					classID[b.Class] = id
					rep.ClassesCreated = append(rep.ClassesCreated, b.Class)
				}
				box := b.Box.Clamp(float64(im.Width), float64(im.Height))
				if box != b.Box {
					if opts.Strict || box.Empty() {
						return fmt.Errorf("%s: box %v reaches outside the %d×%d image %s", b.Where, b.Box, im.Width, im.Height, rec.Name)
					}
					rep.Clipped++
				}
				if !box.Valid() {
					return fmt.Errorf("%s: box %v has no area", b.Where, b.Box)
				}
				if prior[im.ID][priorKey{id, box}] {
					if repeats == 0 {
						firstRepeat = b.Where
					}
					repeats++
				}
				rows.add(b.Where, project.Label{ImageID: im.ID, ClassID: id, AnnotatorID: annID, Box: box,
					Origin: project.OriginImported, Source: opts.Source, Score: b.Score})
				rep.Labels++
			}
		}
		if repeats > 0 {
			return project.Explained(project.ErrDuplicate, "%d of the file's boxes (the first at %s) are stored already for annotator %q, on the same image with the same class and corners: "+
				"was this file imported before? Replace that annotator's imported boxes on the file's images (--again replace) or add these as well (--again append)",
				repeats, firstRepeat, opts.Annotator)
		}
		return rows.insertBulk(ctx, s, tx)
	})
	if err != nil {
		return project.ImportReport{Annotator: opts.Annotator, ClassesCreated: []string{}, Unmatched: []string{}}, fmt.Errorf("import (nothing was stored): %w", err)
	}
	return rep, nil
}

// importImages reads what matching a dataset's records needs of the
// project's images.
func (s *Store) importImages(ctx context.Context) ([]project.Image, error) {
	rows, err := s.pool.Query(ctx, "SELECT id, path, sha256, width, height, orientation, added_at FROM images ORDER BY id")
	if err != nil {
		return nil, fmt.Errorf("import: reading the images: %w", s.translate(err))
	}
	ims, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (project.Image, error) {
		var im project.Image
		err := r.Scan(&im.ID, &im.Path, &im.SHA256, &im.Width, &im.Height, &im.Orientation, &im.Added)
		im.Added = im.Added.UTC()
		return im, err
	})
	if err != nil {
		return nil, fmt.Errorf("import: reading the images: %w", s.translate(err))
	}
	return ims, nil
}

func classIDs(ctx context.Context, tx pgx.Tx) (map[string]int64, error) {
	rows, err := tx.Query(ctx, "SELECT name, id FROM classes")
	if err != nil {
		return nil, err
	}
	m := map[string]int64{}
	var name string
	var id int64
	_, err = pgx.ForEachRow(rows, []any{&name, &id}, func() error { m[name] = id; return nil })
	return m, err
}

func ensureAnnotatorTx(ctx context.Context, s *Store, tx pgx.Tx, name string) (int64, error) {
	var id int64
	err := tx.QueryRow(ctx, "SELECT id FROM annotators WHERE name = $1", name).Scan(&id)
	if errors.Is(err, pgx.ErrNoRows) {
		err = tx.QueryRow(ctx, "INSERT INTO annotators(name) VALUES ($1) RETURNING id", name).Scan(&id)
		if err != nil {
			return 0, fmt.Errorf("add annotator %q (adding annotators needs the reviewer or owner role): %w", name, s.translate(err))
		}
	}
	return id, s.translate(err)
}

// importClassTx adds a class the dataset names, as adding a class does:
// the next palette colour (n classes exist), the first free digit key,
// the last place.
func importClassTx(ctx context.Context, s *Store, tx pgx.Tx, name string, n int) (int64, error) {
	if err := project.ValidateName("class", name); err != nil {
		return 0, project.Explained(project.ErrInvalid, "%v", err)
	}
	rows, err := tx.Query(ctx, "SELECT hot_key FROM classes")
	if err != nil {
		return 0, s.translate(err)
	}
	keys, err := pgx.CollectRows(rows, pgx.RowTo[string])
	if err != nil {
		return 0, s.translate(err)
	}
	key := ""
	for _, k := range strings.Split("1234567890", "") {
		if !contains(keys, k) {
			key = k
			break
		}
	}
	var id int64
	err = tx.QueryRow(ctx, "INSERT INTO classes(name, color, hot_key, position) SELECT $1, $2, $3, coalesce(max(position), -1) + 1 FROM classes RETURNING id",
		name, project.FormatColor(project.PaletteColor(n)), key).Scan(&id)
	if err != nil {
		return 0, fmt.Errorf("add class %q (adding classes needs the owner role): %w", name, s.translate(err))
	}
	return id, nil
}

func contains(list []string, v string) bool {
	for _, x := range list {
		if x == v {
			return true
		}
	}
	return false
}

// priorLabels are the annotator's labels on the images an import covers,
// by image and then by class and box, to find boxes stored already.
type priorLabels map[int64]map[priorKey]bool

type priorKey struct {
	class int64
	box   project.Box
}

// againRule applies ImportOptions.Again: with replace, the annotator's
// imported labels on the file's images go first; otherwise boxes equal to
// ones the annotator already has on the same image count as repeats,
// which refuse the import (a file imported twice would double every box)
// unless append was asked for.
func againRule(ctx context.Context, s *Store, tx pgx.Tx, annID int64, imageIDs []int64, opts project.ImportOptions, rep *project.ImportReport) (priorLabels, error) {
	switch opts.Again {
	case project.ImportAgainAppend:
		return nil, nil
	case project.ImportAgainReplace:
		var before int
		if err := tx.QueryRow(ctx, "SELECT count(*) FROM labels WHERE annotator_id = $1 AND image_id = ANY($2) AND origin = 'imported'", annID, imageIDs).Scan(&before); err != nil {
			return nil, s.translate(err)
		}
		tag, err := tx.Exec(ctx, "DELETE FROM labels WHERE annotator_id = $1 AND image_id = ANY($2) AND origin = 'imported'", annID, imageIDs)
		if err != nil {
			return nil, s.translate(err)
		}
		if int(tag.RowsAffected()) < before {
			return nil, project.Explained(project.ErrNotAllowed, "replacing the imported labels of annotator %q: %d of them are not yours to delete", opts.Annotator, before-int(tag.RowsAffected()))
		}
		rep.Replaced = int(tag.RowsAffected())
		return nil, nil
	case project.ImportAgainRefuse:
		rows, err := tx.Query(ctx, "SELECT image_id, class_id, x0, y0, x1, y1 FROM labels WHERE annotator_id = $1 AND image_id = ANY($2)", annID, imageIDs)
		if err != nil {
			return nil, s.translate(err)
		}
		p := priorLabels{}
		var im int64
		var k priorKey
		_, err = pgx.ForEachRow(rows, []any{&im, &k.class, &k.box.X0, &k.box.Y0, &k.box.X1, &k.box.Y1}, func() error {
			if p[im] == nil {
				p[im] = map[priorKey]bool{}
			}
			p[im][k] = true
			return nil
		})
		return p, s.translate(err)
	}
	return nil, project.Explained(project.ErrInvalid, "unknown choice %q for boxes stored before (refuse, replace or append)", opts.Again)
}
