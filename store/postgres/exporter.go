package postgres

import (
	"context"
	"fmt"

	"github.com/jackc/pgx/v5"

	"boxwright/project"
	"boxwright/project/formats"
)

// ExportImages gathers one annotator's labels for export: every image
// that is not skipped and either carries labels of theirs or is marked
// done or reviewed by them (an image checked and found empty is a useful
// negative example; another annotator's "done" says nothing about this
// one's labels). Classes are all project classes in display order. The
// whole read is one snapshot (a repeatable-read transaction), so that
// others' edits during it do not mix two states in one export.
func (s *Store) ExportImages(ctx context.Context, annotatorID int64) ([]string, []formats.ExportImage, error) {
	var classes []string
	var out []formats.ExportImage
	var exported []project.Image // the image of each out entry
	err := pgx.BeginTxFunc(ctx, s.pool, pgx.TxOptions{IsoLevel: pgx.RepeatableRead, AccessMode: pgx.ReadOnly}, func(tx pgx.Tx) error {
		rows, err := tx.Query(ctx, "SELECT id, name FROM classes ORDER BY position, id")
		if err != nil {
			return err
		}
		names := map[int64]string{}
		var id int64
		var name string
		if _, err := pgx.ForEachRow(rows, []any{&id, &name}, func() error {
			names[id] = name
			classes = append(classes, name)
			return nil
		}); err != nil {
			return err
		}
		rows, err = tx.Query(ctx, "SELECT id, image_id, class_id, x0, y0, x1, y1 FROM labels WHERE annotator_id = $1 ORDER BY image_id, id", annotatorID)
		if err != nil {
			return err
		}
		byImage := map[int64][]formats.BoxRecord{}
		var img, class int64
		var b project.Box
		if _, err := pgx.ForEachRow(rows, []any{&id, &img, &class, &b.X0, &b.Y0, &b.X1, &b.Y1}, func() error {
			byImage[img] = append(byImage[img], formats.BoxRecord{Class: names[class], Box: b, Where: fmt.Sprintf("label %d", id)})
			return nil
		}); err != nil {
			return err
		}
		// The exported annotator's status only, "new" where they have none.
		rows, err = tx.Query(ctx, `SELECT i.id, i.path, i.sha256, i.width, i.height, i.orientation, i.added_at, coalesce(st.status, 'new')
			FROM images i LEFT JOIN image_status st ON st.image_id = i.id AND st.annotator_id = $1 ORDER BY i.path, i.id`, annotatorID)
		if err != nil {
			return err
		}
		ims, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (project.Image, error) {
			var im project.Image
			var status string
			err := r.Scan(&im.ID, &im.Path, &im.SHA256, &im.Width, &im.Height, &im.Orientation, &im.Added, &status)
			im.Status, im.Added = project.ImageStatus(status), im.Added.UTC()
			return im, err
		})
		if err != nil {
			return err
		}
		for _, im := range ims {
			boxes := byImage[im.ID]
			if im.Status == project.StatusSkipped || (len(boxes) == 0 && im.Status != project.StatusDone && im.Status != project.StatusReviewed) {
				continue
			}
			out = append(out, formats.ExportImage{
				Record: formats.ImageRecord{Name: im.Path, Width: im.Width, Height: im.Height, Depth: 3, Boxes: boxes, Where: im.Path},
				Key:    im.SHA256,
			})
			exported = append(exported, im)
		}
		return nil
	})
	if err != nil {
		return nil, nil, fmt.Errorf("gather labels of annotator %d for export: %w", annotatorID, s.translate(err))
	}
	// The files are fetched into this machine's cache after the read,
	// not while it holds the snapshot.
	for i, im := range exported {
		out[i].File = s.ImagePath(im)
	}
	if classes == nil {
		classes = []string{}
	}
	return classes, out, nil
}
