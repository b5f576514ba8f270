package postgres

import (
	"context"
	"fmt"
	"strings"

	"boxwright/project"
)

// ownerOnly refuses, with a message that says who may, a project-wide
// change (classes, images) by a member who is not an owner. The server's
// row-level security refuses it anyway (an INSERT with an error, but an
// UPDATE or DELETE by touching no rows, which would read as "not
// found"); asking first gives one clear message for both. A superuser,
// above row-level security, may.
func (s *Store) ownerOnly(ctx context.Context, q querier, what string) error {
	var rank int
	var super bool
	var kind, user string
	err := q.QueryRow(ctx, `SELECT bw_rank(), coalesce((SELECT rolsuper FROM pg_roles WHERE rolname = current_user), false),
		coalesce((SELECT kind FROM members WHERE role_name = current_user), ''), current_user`).Scan(&rank, &super, &kind, &user)
	if err != nil {
		return fmt.Errorf("%s: %w", what, s.translate(err))
	}
	if rank >= 3 || super {
		return nil
	}
	if kind == "" {
		return project.Explained(project.ErrNotAllowed, "%s: %s is not on the team of %s; only an owner of the project may", what, user, s.name)
	}
	article := "a"
	if strings.ContainsRune("aeiou", rune(kind[0])) {
		article = "an"
	}
	return project.Explained(project.ErrNotAllowed, "%s: only an owner of the project may; %s is %s %s", what, user, article, kind)
}
