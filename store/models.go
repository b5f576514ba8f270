package store

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"math"

	"boxwright/project"
)

const modelCols = "id, name, architecture, classes, input_size, trained_on, seed, epochs, val_ap50, is_current, created_at, updated_at"

// scanModel reads the modelCols of a row, and extra destinations after
// them.
func scanModel(row interface{ Scan(...any) error }, extra ...any) (project.Model, error) {
	var m project.Model
	var classes, epochs, created, updated string
	var ap sql.NullFloat64
	var seed int64
	var current int
	dst := append([]any{&m.ID, &m.Name, &m.Architecture, &classes, &m.InputSize, &m.TrainedOn, &seed, &epochs, &ap, &current, &created, &updated}, extra...)
	if err := row.Scan(dst...); err != nil {
		return m, translateCode(err)
	}
	m.Seed, m.Current = uint64(seed), current == 1
	m.Created, m.Updated = parseTime(created), parseTime(updated)
	m.ValAP50 = math.NaN()
	if ap.Valid {
		m.ValAP50 = ap.Float64
	}
	if err := json.Unmarshal([]byte(classes), &m.Classes); err != nil {
		return m, project.Explained(project.ErrInvalid, "model %q: its class list is damaged: %v", m.Name, err)
	}
	var err error
	if m.Epochs, err = project.DecodeEpochs(epochs); err != nil {
		return m, project.Explained(project.ErrInvalid, "model %q: its learning curve is damaged: %v", m.Name, err)
	}
	return m, nil
}

func nullAP(v float64) any {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	return v
}

// AddModel stores a new model in one transaction. An empty name takes the
// next "trained-N"; the first model, or one with Current set, becomes the
// current model.
func (s *Store) AddModel(ctx context.Context, m project.Model) (project.Model, error) {
	err := s.tx(ctx, func(tx *sql.Tx) error {
		if m.Name == "" {
			var n int64
			if err := tx.QueryRowContext(ctx, "SELECT coalesce(max(id), 0) FROM models").Scan(&n); err != nil {
				return err
			}
			for {
				n++
				m.Name = fmt.Sprintf("trained-%d", n)
				var taken int
				if err := tx.QueryRowContext(ctx, "SELECT count(*) FROM models WHERE name = ?", m.Name).Scan(&taken); err != nil {
					return err
				}
				if taken == 0 {
					break
				}
			}
		}
		if err := m.Check(); err != nil {
			return err
		}
		var count int
		if err := tx.QueryRowContext(ctx, "SELECT count(*) FROM models").Scan(&count); err != nil {
			return err
		}
		m.Current = m.Current || count == 0
		if m.Current {
			if _, err := tx.ExecContext(ctx, "UPDATE models SET is_current = 0 WHERE is_current = 1"); err != nil {
				return err
			}
		}
		classes, err := json.Marshal(m.Classes)
		if err != nil {
			return err
		}
		epochs, err := project.EncodeEpochs(m.Epochs)
		if err != nil {
			return err
		}
		now := s.now()
		m.Created, m.Updated = now, now
		res, err := tx.ExecContext(ctx, `INSERT INTO models(name, architecture, classes, input_size, trained_on, seed, epochs, val_ap50, weights, weights_sha256, is_current, created_at, updated_at)
			VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?)`,
			m.Name, m.Architecture, string(classes), m.InputSize, m.TrainedOn, int64(m.Seed), epochs, nullAP(m.ValAP50),
			m.Weights, project.WeightsSum(m.Weights), boolInt(m.Current), formatTime(now), formatTime(now))
		if err != nil {
			return s.translate(err)
		}
		m.ID, _ = res.LastInsertId()
		return nil
	})
	if err != nil {
		return project.Model{}, fmt.Errorf("store model %q: %w", m.Name, err)
	}
	return m, nil
}

// UpdateModel replaces a model's weights, learning curve, figures and
// description (training continued from it), by ID.
func (s *Store) UpdateModel(ctx context.Context, m project.Model) error {
	if err := m.Check(); err != nil {
		return fmt.Errorf("update model: %w", s.damaged(err))
	}
	epochs, err := project.EncodeEpochs(m.Epochs)
	if err != nil {
		return fmt.Errorf("update model %q: %w", m.Name, err)
	}
	classes, err := json.Marshal(m.Classes)
	if err != nil {
		return err
	}
	return s.updateOne(ctx, fmt.Sprintf("update model %q", m.Name),
		`UPDATE models SET classes = ?, input_size = ?, trained_on = ?, seed = ?, epochs = ?, val_ap50 = ?, weights = ?, weights_sha256 = ?, updated_at = ? WHERE id = ?`,
		string(classes), m.InputSize, m.TrainedOn, int64(m.Seed), epochs, nullAP(m.ValAP50), m.Weights, project.WeightsSum(m.Weights), formatTime(s.now()), m.ID)
}

// Models lists the models, oldest first, without their weights.
func (s *Store) Models(ctx context.Context) ([]project.Model, error) {
	rows, err := s.db.QueryContext(ctx, "SELECT "+modelCols+" FROM models ORDER BY id")
	if err != nil {
		return nil, fmt.Errorf("list models: %w", s.translate(err))
	}
	defer rows.Close()
	var out []project.Model
	for rows.Next() {
		m, err := scanModel(rows)
		if err != nil {
			return nil, fmt.Errorf("list models: %w", s.damaged(err))
		}
		out = append(out, m)
	}
	return out, s.damaged(rows.Err())
}

func (s *Store) modelWhere(ctx context.Context, what, where string, args ...any) (project.Model, error) {
	var weights []byte
	var sum string
	m, err := scanModel(s.db.QueryRowContext(ctx, "SELECT "+modelCols+", weights, weights_sha256 FROM models WHERE "+where, args...), &weights, &sum)
	if errors.Is(err, project.ErrNotFound) {
		return m, project.Explained(project.ErrNotFound, "the project has no %s (boxwright models lists the ones it has)", what)
	}
	if err != nil {
		return m, fmt.Errorf("read the %s: %w", what, err)
	}
	if project.WeightsSum(weights) != sum {
		return m, project.Explained(project.ErrInvalid, "read the %s: its weights are damaged (checksum mismatch); train it again or delete it", what)
	}
	m.Weights = weights
	return m, nil
}

func boolInt(b bool) int {
	if b {
		return 1
	}
	return 0
}

// Model reads one model by name with its weights.
func (s *Store) Model(ctx context.Context, name string) (project.Model, error) {
	return s.modelWhere(ctx, fmt.Sprintf("model %q", name), "name = ?", name)
}

// CurrentModel reads the current model with its weights.
func (s *Store) CurrentModel(ctx context.Context) (project.Model, error) {
	return s.modelWhere(ctx, "current model", "is_current = 1")
}

// SetCurrentModel makes the named model the current one.
func (s *Store) SetCurrentModel(ctx context.Context, name string) error {
	return s.tx(ctx, func(tx *sql.Tx) error {
		var id int64
		if err := tx.QueryRowContext(ctx, "SELECT id FROM models WHERE name = ?", name).Scan(&id); err != nil {
			if err = s.translate(err); errors.Is(err, project.ErrNotFound) {
				return project.Explained(project.ErrNotFound, "the project has no model %q (boxwright models lists the ones it has)", name)
			}
			return fmt.Errorf("make model %q current: %w", name, err)
		}
		if _, err := tx.ExecContext(ctx, "UPDATE models SET is_current = 0 WHERE is_current = 1"); err != nil {
			return err
		}
		_, err := tx.ExecContext(ctx, "UPDATE models SET is_current = 1 WHERE id = ?", id)
		return s.translate(err)
	})
}

// DeleteModel removes a model; its suggestions stay, with their source.
func (s *Store) DeleteModel(ctx context.Context, name string) error {
	return s.updateOne(ctx, fmt.Sprintf("delete model %q", name), "DELETE FROM models WHERE name = ?", name)
}
