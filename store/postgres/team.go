package postgres

import (
	"context"
	"crypto/hmac"
	"crypto/pbkdf2"
	"crypto/rand"
	"crypto/sha256"
	"encoding/base64"
	"fmt"
	"strings"

	"github.com/jackc/pgx/v5"

	"boxwright/project"
)

// Member kinds, each allowed what the ones before it are.
const (
	KindAnnotator = "annotator"
	KindReviewer  = "reviewer"
	KindOwner     = "owner"
)

// Member is one person of a server project's team.
type Member struct {
	Role      string // their server login role
	Annotator string // the annotator they label as
	Kind      string
}

// Team lists the members, by role name.
func (s *Store) Team(ctx context.Context) ([]Member, error) {
	rows, err := s.pool.Query(ctx, `SELECT m.role_name, coalesce(a.name, ''), m.kind FROM members m LEFT JOIN annotators a ON a.id = m.annotator_id ORDER BY m.role_name`)
	if err != nil {
		return nil, fmt.Errorf("list the team: %w", s.translate(err))
	}
	ms, err := pgx.CollectRows(rows, func(r pgx.CollectableRow) (Member, error) {
		var m Member
		return m, r.Scan(&m.Role, &m.Annotator, &m.Kind)
	})
	return ms, s.translate(err)
}

// Me is the member the connection logs in as; ErrNotFound for a role
// that is not on the team (a superuser, say).
func (s *Store) Me(ctx context.Context) (Member, error) {
	var m Member
	err := s.pool.QueryRow(ctx, `SELECT m.role_name, coalesce(a.name, ''), m.kind FROM members m LEFT JOIN annotators a ON a.id = m.annotator_id WHERE m.role_name = current_user`).
		Scan(&m.Role, &m.Annotator, &m.Kind)
	return m, s.translate(err)
}

// AddMember makes name a member of the given kind, labelling as the
// annotator of the same name: a login role with the password (created
// when new; an existing role keeps its password when password is ""),
// the team role granted, and the members row. It returns the SQL it ran,
// with the password's SCRAM verifier in place of the password: the
// password itself never leaves this process, and the server stores only
// the verifier. Run by an owner who may create roles.
func (s *Store) AddMember(ctx context.Context, name, kind, password string) ([]string, error) {
	if err := project.ValidateName("member", name); err != nil {
		return nil, project.Explained(project.ErrInvalid, "add member: %v", err)
	}
	if kind != KindAnnotator && kind != KindReviewer && kind != KindOwner {
		return nil, project.Explained(project.ErrInvalid, "add member %q: role %q: use annotator, reviewer or owner", name, kind)
	}
	role := pgx.Identifier{name}.Sanitize()
	var ran []string
	err := inTx(ctx, s.pool, func(tx pgx.Tx) error {
		team := pgx.Identifier{teamRole(s.database(ctx, tx))}.Sanitize()
		var exists bool
		if err := tx.QueryRow(ctx, "SELECT EXISTS (SELECT 1 FROM pg_roles WHERE rolname = $1)", name).Scan(&exists); err != nil {
			return err
		}
		var stmts []string
		switch {
		case !exists && password == "":
			return project.Explained(project.ErrInvalid, "add member %q: a new member needs a password", name)
		case !exists:
			v, err := scramVerifier(password)
			if err != nil {
				return err
			}
			stmts = append(stmts, fmt.Sprintf("CREATE ROLE %s LOGIN PASSWORD '%s'", role, v))
		case password != "":
			v, err := scramVerifier(password)
			if err != nil {
				return err
			}
			stmts = append(stmts, fmt.Sprintf("ALTER ROLE %s PASSWORD '%s'", role, v))
		}
		stmts = append(stmts,
			fmt.Sprintf("GRANT %s TO %s", team, role),
			fmt.Sprintf("GRANT CONNECT ON DATABASE %s TO %s", pgx.Identifier{s.database(ctx, tx)}.Sanitize(), role))
		for _, q := range stmts {
			if _, err := tx.Exec(ctx, q); err != nil {
				return fmt.Errorf("%s: %w", q, err)
			}
		}
		const upsert = `WITH a AS (INSERT INTO annotators(name) VALUES ($1) ON CONFLICT (name) DO UPDATE SET name = EXCLUDED.name RETURNING id)
			INSERT INTO members(role_name, annotator_id, kind) SELECT $1, id, $2 FROM a
			ON CONFLICT (role_name) DO UPDATE SET kind = EXCLUDED.kind, annotator_id = EXCLUDED.annotator_id`
		if _, err := tx.Exec(ctx, upsert, name, kind); err != nil {
			return err
		}
		ran = append(stmts, fmt.Sprintf("INSERT INTO members … (%s as %s)", quoteLiteral(name), kind))
		return nil
	})
	if err != nil {
		return nil, fmt.Errorf("add member %q: %w", name, s.translate(err))
	}
	return ran, nil
}

// RemoveMember takes name off the team: the team role is revoked and the
// members row deleted. The login role stays (it may belong to other
// projects on the server) and so do the labels they made.
func (s *Store) RemoveMember(ctx context.Context, name string) ([]string, error) {
	var ran []string
	err := inTx(ctx, s.pool, func(tx pgx.Tx) error {
		tag, err := tx.Exec(ctx, "DELETE FROM members WHERE role_name = $1", name)
		if err != nil {
			return err
		}
		if tag.RowsAffected() == 0 {
			return project.Explained(project.ErrNotFound, "%q is not on the team", name)
		}
		role := pgx.Identifier{name}.Sanitize()
		db := s.database(ctx, tx)
		stmts := []string{
			fmt.Sprintf("REVOKE %s FROM %s", pgx.Identifier{teamRole(db)}.Sanitize(), role),
			fmt.Sprintf("REVOKE CONNECT ON DATABASE %s FROM %s", pgx.Identifier{db}.Sanitize(), role),
		}
		for _, q := range stmts {
			if _, err := tx.Exec(ctx, q); err != nil {
				return fmt.Errorf("%s: %w", q, err)
			}
		}
		ran = append([]string{fmt.Sprintf("DELETE FROM members WHERE role_name = %s", quoteLiteral(name))}, stmts...)
		return nil
	})
	if err != nil {
		return nil, fmt.Errorf("remove member %q: %w", name, s.translate(err))
	}
	return ran, nil
}

// scramVerifier is what PostgreSQL stores for a SCRAM-SHA-256 password
// (RFC 5802 and RFC 7677; the stored form of the PostgreSQL manual,
// "Password Authentication"): 4096 iterations, a 16-byte random salt.
func scramVerifier(password string) (string, error) {
	salt := make([]byte, 16)
	if _, err := rand.Read(salt); err != nil {
		return "", err
	}
	return scramVerifierWith(password, salt, 4096)
}

func scramVerifierWith(password string, salt []byte, iterations int) (string, error) {
	salted, err := pbkdf2.Key(sha256.New, password, salt, iterations, sha256.Size)
	if err != nil {
		return "", err
	}
	mac := func(key []byte, msg string) []byte {
		h := hmac.New(sha256.New, key)
		h.Write([]byte(msg))
		return h.Sum(nil)
	}
	clientKey := mac(salted, "Client Key")
	stored := sha256.Sum256(clientKey)
	server := mac(salted, "Server Key")
	b64 := base64.StdEncoding.EncodeToString
	return fmt.Sprintf("SCRAM-SHA-256$%d:%s$%s:%s", iterations, b64(salt), b64(stored[:]), b64(server)), nil
}

func quoteLiteral(v string) string { return "'" + strings.ReplaceAll(v, "'", "''") + "'" }
