package postgres

import (
	"context"
	"encoding/json"
	"fmt"
	"math"

	"github.com/jackc/pgx/v5"

	"boxwright/project"
)

const modelCols = "id, name, architecture, classes, input_size, trained_on, seed, epochs, val_ap50, is_current, created_at, updated_at"

// scanModel reads the modelCols of a row, and extra destinations after
// them.
func scanModel(row pgx.Row, extra ...any) (project.Model, error) {
	var m project.Model
	var classes, epochs string
	var ap *float64
	var seed int64
	dst := append([]any{&m.ID, &m.Name, &m.Architecture, &classes, &m.InputSize, &m.TrainedOn, &seed, &epochs, &ap, &m.Current, &m.Created, &m.Updated}, extra...)
	if err := row.Scan(dst...); err != nil {
		return m, err
	}
	m.Seed = uint64(seed)
	m.Created, m.Updated = m.Created.UTC(), m.Updated.UTC()
	m.ValAP50 = math.NaN()
	if ap != nil {
		m.ValAP50 = *ap
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

func nullAP(v float64) *float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	return &v
}

// AddModel stores a new model in one transaction. An empty name takes the
// next "trained-N"; the first model, or one with Current set, becomes the
// current model.
func (s *Store) AddModel(ctx context.Context, m project.Model) (project.Model, error) {
	err := s.tx(ctx, func(tx pgx.Tx) error {
		// Two clients adding a model at once must not both take the first
		// place or the same trained-N: the second waits for the first.
		if _, err := tx.Exec(ctx, "LOCK TABLE models IN SHARE ROW EXCLUSIVE MODE"); err != nil {
			return err
		}
		if m.Name == "" {
			var n int64
			if err := tx.QueryRow(ctx, "SELECT coalesce(max(id), 0) FROM models").Scan(&n); err != nil {
				return err
			}
			for {
				n++
				m.Name = fmt.Sprintf("trained-%d", n)
				var taken bool
				if err := tx.QueryRow(ctx, "SELECT EXISTS (SELECT 1 FROM models WHERE name = $1)", m.Name).Scan(&taken); err != nil {
					return err
				}
				if !taken {
					break
				}
			}
		}
		if err := m.Check(); err != nil {
			return err
		}
		var count int
		if err := tx.QueryRow(ctx, "SELECT count(*) FROM models").Scan(&count); err != nil {
			return err
		}
		m.Current = m.Current || count == 0
		if m.Current {
			if _, err := tx.Exec(ctx, "UPDATE models SET is_current = false WHERE is_current"); err != nil {
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
		return tx.QueryRow(ctx, `INSERT INTO models(name, architecture, classes, input_size, trained_on, seed, epochs, val_ap50, weights, weights_sha256, is_current)
			VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11) RETURNING id, created_at, updated_at`,
			m.Name, m.Architecture, string(classes), m.InputSize, m.TrainedOn, int64(m.Seed), epochs, nullAP(m.ValAP50),
			m.Weights, project.WeightsSum(m.Weights), m.Current).Scan(&m.ID, &m.Created, &m.Updated)
	})
	if err != nil {
		return project.Model{}, fmt.Errorf("store model %q: %w", m.Name, err)
	}
	m.Created, m.Updated = m.Created.UTC(), m.Updated.UTC()
	return m, nil
}

// UpdateModel replaces a model's weights, learning curve, figures and
// description (training continued from it), by ID.
func (s *Store) UpdateModel(ctx context.Context, m project.Model) error {
	if err := m.Check(); err != nil {
		return fmt.Errorf("update model: %w", err)
	}
	epochs, err := project.EncodeEpochs(m.Epochs)
	if err != nil {
		return fmt.Errorf("update model %q: %w", m.Name, err)
	}
	classes, err := json.Marshal(m.Classes)
	if err != nil {
		return err
	}
	return s.tx(ctx, func(tx pgx.Tx) error {
		tag, err := tx.Exec(ctx, `UPDATE models SET classes = $1, input_size = $2, trained_on = $3, seed = $4, epochs = $5, val_ap50 = $6, weights = $7, weights_sha256 = $8, updated_at = now() WHERE id = $9`,
			string(classes), m.InputSize, m.TrainedOn, int64(m.Seed), epochs, nullAP(m.ValAP50), m.Weights, project.WeightsSum(m.Weights), m.ID)
		if err != nil {
			return fmt.Errorf("update model %q: %w", m.Name, s.translate(err))
		}
		return s.modelReached(ctx, tx, tag.RowsAffected(), fmt.Sprintf("update model %q", m.Name), "id = $1", m.ID)
	})
}

// modelReached explains a change of models that reached no row: the
// model does not exist, or row-level security kept it from a member
// below reviewer.
func (s *Store) modelReached(ctx context.Context, tx pgx.Tx, n int64, what, where string, arg any) error {
	if n > 0 {
		return nil
	}
	var there bool
	if err := tx.QueryRow(ctx, "SELECT EXISTS (SELECT 1 FROM models WHERE "+where+")", arg).Scan(&there); err != nil {
		return fmt.Errorf("%s: %w", what, s.translate(err))
	}
	if !there {
		return fmt.Errorf("%s: %w", what, project.ErrNotFound)
	}
	return project.Explained(project.ErrNotAllowed, "%s: changing models needs the reviewer or owner role in this project", what)
}

// Models lists the models, oldest first, without their weights.
func (s *Store) Models(ctx context.Context) ([]project.Model, error) {
	rows, err := s.pool.Query(ctx, "SELECT "+modelCols+" FROM models ORDER BY id")
	if err != nil {
		return nil, fmt.Errorf("list models: %w", s.translate(err))
	}
	out, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (project.Model, error) { return scanModel(r) })
	if err != nil {
		return nil, fmt.Errorf("list models: %w", s.translate(err))
	}
	return out, nil
}

func (s *Store) modelWhere(ctx context.Context, what, where string, args ...any) (project.Model, error) {
	var weights []byte
	var sum string
	m, err := scanModel(s.pool.QueryRow(ctx, "SELECT "+modelCols+", weights, weights_sha256 FROM models WHERE "+where, args...), &weights, &sum)
	if err != nil {
		return m, fmt.Errorf("read %s: %w", what, s.translate(err))
	}
	if project.WeightsSum(weights) != sum {
		return m, project.Explained(project.ErrInvalid, "read %s: its weights are damaged (checksum mismatch); train it again or delete it", what)
	}
	m.Weights = weights
	return m, nil
}

// Model reads one model by name with its weights.
func (s *Store) Model(ctx context.Context, name string) (project.Model, error) {
	return s.modelWhere(ctx, fmt.Sprintf("model %q", name), "name = $1", name)
}

// CurrentModel reads the current model with its weights.
func (s *Store) CurrentModel(ctx context.Context) (project.Model, error) {
	return s.modelWhere(ctx, "the current model", "is_current")
}

// SetCurrentModel makes the named model the current one.
func (s *Store) SetCurrentModel(ctx context.Context, name string) error {
	what := fmt.Sprintf("make model %q current", name)
	return s.tx(ctx, func(tx pgx.Tx) error {
		var id int64
		if err := tx.QueryRow(ctx, "SELECT id FROM models WHERE name = $1", name).Scan(&id); err != nil {
			return fmt.Errorf("%s: %w", what, s.translate(err))
		}
		if _, err := tx.Exec(ctx, "UPDATE models SET is_current = false WHERE is_current AND id <> $1", id); err != nil {
			return fmt.Errorf("%s: %w", what, s.translate(err))
		}
		tag, err := tx.Exec(ctx, "UPDATE models SET is_current = true WHERE id = $1", id)
		if err != nil {
			return fmt.Errorf("%s: %w", what, s.translate(err))
		}
		return s.modelReached(ctx, tx, tag.RowsAffected(), what, "id = $1", id)
	})
}

// DeleteModel removes a model; its suggestions stay, with their source.
func (s *Store) DeleteModel(ctx context.Context, name string) error {
	what := fmt.Sprintf("delete model %q", name)
	return s.tx(ctx, func(tx pgx.Tx) error {
		tag, err := tx.Exec(ctx, "DELETE FROM models WHERE name = $1", name)
		if err != nil {
			return fmt.Errorf("%s: %w", what, s.translate(err))
		}
		return s.modelReached(ctx, tx, tag.RowsAffected(), what, "name = $1", name)
	})
}
