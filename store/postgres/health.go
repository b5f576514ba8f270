package postgres

import (
	"context"
	"fmt"
)

// ReadOnly is false: what a member may not change, the server refuses
// row by row (row-level security), and the window asks Me what the role
// allows.
func (s *Store) ReadOnly() bool { return false }

// Damage is "": a server keeps its own pages sound (its checksums, WAL
// and backups are the server administrator's), so there is nothing of
// the file kind to report on open. Check looks at what is the project's.
func (s *Store) Damage() string { return "" }

// SetWaitNotice routes messages about waiting, such as a lost connection
// being restored.
func (s *Store) SetWaitNotice(f func(string)) { s.notice = f }

// Check looks for what the server's constraints cannot express: images
// whose bytes are not (all) stored, stored contents whose chunks do not
// add up, and members whose login role is gone from the server.
func (s *Store) Check(ctx context.Context) ([]string, error) {
	var found []string
	checks := []struct{ query, format string }{
		{`SELECT i.id::text, i.path FROM images i LEFT JOIN image_contents c ON c.sha256 = i.sha256
		  WHERE c.sha256 IS NULL OR NOT c.complete ORDER BY i.id`,
			"image %s (%s): its bytes are not all on the server (an upload did not finish; add the file again)"},
		{`SELECT c.sha256, format('%s of %s chunks, %s of %s bytes', count(k.n), c.chunks, coalesce(sum(length(k.bytes)), 0), c.size)
		  FROM image_contents c LEFT JOIN image_chunks k ON k.sha256 = c.sha256
		  WHERE c.complete GROUP BY c.sha256, c.chunks, c.size
		  HAVING count(k.n) <> c.chunks OR coalesce(sum(length(k.bytes)), 0) <> c.size ORDER BY c.sha256`,
			"stored image %s: %s"},
		{`SELECT m.role_name, m.kind FROM members m LEFT JOIN pg_roles r ON r.rolname = m.role_name
		  WHERE r.rolname IS NULL ORDER BY m.role_name`,
			"member %s (%s): the server has no such login role any more"},
	}
	for _, c := range checks {
		rows, err := s.pool.Query(ctx, c.query)
		if err != nil {
			return nil, fmt.Errorf("check %s: %w", s.name, s.translate(err))
		}
		for rows.Next() {
			var a, b string
			if err := rows.Scan(&a, &b); err != nil {
				rows.Close()
				return nil, fmt.Errorf("check %s: %w", s.name, s.translate(err))
			}
			found = append(found, fmt.Sprintf(c.format, a, b))
		}
		rows.Close()
		if err := rows.Err(); err != nil {
			return nil, fmt.Errorf("check %s: %w", s.name, s.translate(err))
		}
	}
	return found, nil
}
