package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"strings"

	"boxwright/project"
	"boxwright/project/formats"
)

// ImportDataset stores the dataset's boxes as labels of one annotator, in
// one transaction: any bad record rolls everything back and the error
// names it. Records whose image is not in the project are reported, not
// imported; boxes reaching outside their image are clipped and counted
// (refused when opts.Strict).
func (s *Store) ImportDataset(ctx context.Context, ds *formats.Dataset, opts project.ImportOptions) (project.ImportReport, error) {
	if err := s.CheckBeforeBulkWrite(ctx); err != nil {
		return project.ImportReport{}, err
	}
	rep := project.ImportReport{Annotator: opts.Annotator, ClassesCreated: []string{}, Unmatched: []string{}}
	if err := project.ValidateName("annotator", opts.Annotator); err != nil {
		return rep, project.Explained(project.ErrInvalid, "import: %v", err)
	}
	ims, err := s.Images(ctx)
	if err != nil {
		return rep, err
	}
	matcher := project.NewImageMatcher(ims)
	classes, err := s.Classes(ctx)
	if err != nil {
		return rep, err
	}
	classID := map[string]int64{}
	for _, c := range classes {
		classID[c.Name] = c.ID
	}
	// Nothing is stored unless the records match the project's images
	// (formats.MatchImages says the rules).
	if rep.Unmatched, err = formats.MatchImages(ds, matcher, opts.SkipUnmatched); err != nil {
		return rep, err
	}
	err = s.bulkTx(ctx, func(tx *sql.Tx) error {
		annID, err := ensureAnnotatorTx(ctx, tx, opts.Annotator, formatTime(s.now()))
		if err != nil {
			return err
		}
		var covered []int64
		for _, rec := range ds.Images {
			if im, ok, _ := matcher.Match(rec.Name); ok {
				covered = append(covered, im.ID)
			}
		}
		prior, err := againRule(ctx, tx, annID, covered, opts, &rep)
		if err != nil {
			return err
		}
		repeats, firstRepeat := 0, ""
		now := formatTime(s.now())
		ins := newLabelInserter(ctx, tx, annID, project.OriginImported, opts.Source, now, now)
		defer ins.close()
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
					if id, err = addClassTx(ctx, tx, b.Class); err != nil {
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
				if err := checkScore(b.Score); err != nil {
					return fmt.Errorf("%s: %w", b.Where, err)
				}
				if prior[im.ID][priorKey{id, box}] {
					if repeats == 0 {
						firstRepeat = b.Where
					}
					repeats++
				}
				if err := ins.add(b.Where, im.ID, id, box, b.Score); err != nil {
					return err
				}
				rep.Labels++
			}
		}
		if repeats > 0 {
			return project.Explained(project.ErrDuplicate, "%d of the file's boxes (the first at %s) are stored already for annotator %q, on the same image with the same class and corners: "+
				"was this file imported before? Replace that annotator's imported boxes on the file's images (--again replace) or add these as well (--again append)",
				repeats, firstRepeat, opts.Annotator)
		}
		return ins.flush()
	})
	if err != nil {
		return project.ImportReport{Annotator: opts.Annotator, ClassesCreated: []string{}, Unmatched: []string{}}, fmt.Errorf("import (nothing was stored): %w", s.damaged(err))
	}
	return rep, nil
}

func ensureAnnotatorTx(ctx context.Context, tx *sql.Tx, name, now string) (int64, error) {
	var id int64
	err := tx.QueryRowContext(ctx, "SELECT id FROM annotators WHERE name = ?", name).Scan(&id)
	if errors.Is(err, sql.ErrNoRows) {
		res, err := tx.ExecContext(ctx, "INSERT INTO annotators(name, created_at) VALUES (?, ?)", name, now)
		if err != nil {
			return 0, translateCode(err)
		}
		return res.LastInsertId()
	}
	return id, err
}

func addClassTx(ctx context.Context, tx *sql.Tx, name string) (int64, error) {
	if err := project.ValidateName("class", name); err != nil {
		return 0, project.Explained(project.ErrInvalid, "%v", err)
	}
	c, err := insertClassTx(ctx, tx, project.Class{Name: name})
	return c.ID, err
}

// bulkTx is tx for writes of many rows through labelInserter. Each of
// its multi-row INSERTs keeps an undo record of the pages it changes (a
// statement journal), so that a refused row takes back only that
// statement; beyond 64 KiB SQLite keeps it in a temporary file, which
// for an import of 200,000 labels meant some 50,000 writes. Here it is
// kept in memory (temp_store = MEMORY, which must be set before the
// transaction begins, on its connection, and is set back after). The
// transaction itself is as every other: all or nothing, and durable as
// the project's journal settings make any commit.
func (s *Store) bulkTx(ctx context.Context, fn func(*sql.Tx) error) error {
	conn, err := s.db.Conn(ctx)
	if err != nil {
		return s.damaged(err)
	}
	defer conn.Close()
	if _, err := conn.ExecContext(ctx, "PRAGMA temp_store = MEMORY"); err != nil {
		return s.damaged(err)
	}
	defer conn.ExecContext(context.WithoutCancel(ctx), "PRAGMA temp_store = DEFAULT")
	tx, err := s.beginWith(ctx, conn.BeginTx)
	return s.runTx(tx, err, fn)
}

// labelInserter writes the labels of one import in multi-row INSERTs:
// for big imports the per-statement and per-value overhead, not SQLite,
// is what costs. The columns every row of an import shares (annotator,
// origin, source, times) are parameters ?1 to ?5, bound once per
// statement; each row has its own 7. A statement is run through Query,
// which the driver binds and steps in one call into SQLite, where Exec
// makes one call per value.
type labelInserter struct {
	ctx   context.Context
	tx    *sql.Tx
	full  *sql.Stmt
	args  []any // the shared values, then each row's
	where []string
}

const (
	labelSharedCols = 5
	labelRowCols    = 7
	// rows per statement: 5 + 7*256 = 1797 parameters, well under
	// SQLite's limit of 32766
	labelBatch = 256
)

func labelInsertSQL(rows int) string {
	var b strings.Builder
	b.WriteString("INSERT INTO labels(image_id, class_id, annotator_id, x0, y0, x1, y1, origin, source, score, created_at, updated_at) VALUES ")
	for i := 0; i < rows; i++ {
		if i > 0 {
			b.WriteByte(',')
		}
		p := labelSharedCols + 1 + labelRowCols*i
		fmt.Fprintf(&b, "(?%d,?%d,?1,?%d,?%d,?%d,?%d,?2,?3,?%d,?4,?5)", p, p+1, p+2, p+3, p+4, p+5, p+6)
	}
	return b.String()
}

// newLabelInserter writes labels of one annotator, origin and source,
// created and updated at the same time.
func newLabelInserter(ctx context.Context, tx *sql.Tx, annotatorID int64, origin project.Origin, source, created, updated string) *labelInserter {
	args := make([]any, labelSharedCols, labelSharedCols+labelRowCols*labelBatch)
	args[0], args[1], args[2], args[3], args[4] = annotatorID, string(origin), source, created, updated
	return &labelInserter{ctx: ctx, tx: tx, args: args, where: make([]string, 0, labelBatch)}
}

// setOrigin makes the labels added next of this origin and source; the
// labels queued before are written first when they differ.
func (l *labelInserter) setOrigin(origin project.Origin, source string) error {
	if l.args[1] == string(origin) && l.args[2] == source {
		return nil
	}
	if err := l.flush(); err != nil {
		return err
	}
	l.args[1], l.args[2] = string(origin), source
	return nil
}

// add queues a label; where names its record for messages.
func (l *labelInserter) add(where string, imageID, classID int64, b project.Box, score float64) error {
	l.args = append(l.args, imageID, classID, b.X0, b.Y0, b.X1, b.Y1, score)
	l.where = append(l.where, where)
	if len(l.where) == labelBatch {
		return l.flush()
	}
	return nil
}

func (l *labelInserter) flush() error {
	n := len(l.where)
	if n == 0 {
		return nil
	}
	var rows *sql.Rows
	var err error
	if n == labelBatch {
		if l.full == nil {
			if l.full, err = l.tx.PrepareContext(l.ctx, labelInsertSQL(labelBatch)); err != nil {
				return err
			}
		}
		rows, err = l.full.QueryContext(l.ctx, l.args...)
	} else {
		rows, err = l.tx.QueryContext(l.ctx, labelInsertSQL(n), l.args...)
	}
	if err == nil {
		err = rows.Close()
	}
	if err != nil {
		// Name the batch's first record; the checks before insertion make a
		// database refusal here rare.
		return fmt.Errorf("%s (or one of the %d records after it): %w", l.where[0], n-1, missingRef(translateCode(err), "its image, class or annotator"))
	}
	l.args, l.where = l.args[:labelSharedCols], l.where[:0]
	return nil
}

func (l *labelInserter) close() {
	if l.full != nil {
		l.full.Close()
	}
}

// priorLabels are the annotator's labels on the images an import covers,
// by image and then by class and box, to find boxes stored already.
type priorLabels map[int64]map[priorKey]bool

type priorKey struct {
	class int64
	box   project.Box
}

func readPrior(ctx context.Context, tx *sql.Tx, annID int64) (priorLabels, error) {
	rows, err := tx.QueryContext(ctx, "SELECT image_id, class_id, x0, y0, x1, y1 FROM labels WHERE annotator_id = ?", annID)
	if err != nil {
		return nil, translateCode(err)
	}
	defer rows.Close()
	p := priorLabels{}
	for rows.Next() {
		var im int64
		var k priorKey
		if err := rows.Scan(&im, &k.class, &k.box.X0, &k.box.Y0, &k.box.X1, &k.box.Y1); err != nil {
			return nil, err
		}
		if p[im] == nil {
			p[im] = map[priorKey]bool{}
		}
		p[im][k] = true
	}
	return p, rows.Err()
}

// againRule applies ImportOptions.Again: with replace, the annotator's
// imported labels on the file's images go first; otherwise boxes equal to
// ones the annotator already has on the same image count as repeats,
// which refuse the import (a file imported twice would double every box)
// unless append was asked for.
func againRule(ctx context.Context, tx *sql.Tx, annID int64, imageIDs []int64, opts project.ImportOptions, rep *project.ImportReport) (priorLabels, error) {
	switch opts.Again {
	case project.ImportAgainAppend:
		return nil, nil
	case project.ImportAgainReplace:
		for _, id := range imageIDs {
			res, err := tx.ExecContext(ctx, "DELETE FROM labels WHERE annotator_id = ? AND image_id = ? AND origin = 'imported'", annID, id)
			if err != nil {
				return nil, translateCode(err)
			}
			n, _ := res.RowsAffected()
			rep.Replaced += int(n)
		}
		return nil, nil
	case project.ImportAgainRefuse:
		return readPrior(ctx, tx, annID)
	}
	return nil, project.Explained(project.ErrInvalid, "unknown choice %q for boxes stored before (refuse, replace or append)", opts.Again)
}
