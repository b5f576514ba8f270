package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"time"

	"github.com/mattn/go-sqlite3"

	"boxwright/project"
)

// noticeEvery is how often a waiting writer says that it is still waiting.
const noticeEvery = 5 * time.Second

// begin starts a write transaction. When another program is writing to
// the file, SQLite waits busyTimeout and hands back; begin then says who
// holds the file (through Notice) and keeps trying up to WriteWait, so
// that a long import elsewhere delays this write instead of failing it.
func (s *Store) begin(ctx context.Context) (*sql.Tx, error) {
	return s.beginWith(ctx, s.db.BeginTx)
}

// beginWith is begin on the connection of beginTx.
func (s *Store) beginWith(ctx context.Context, beginTx func(context.Context, *sql.TxOptions) (*sql.Tx, error)) (*sql.Tx, error) {
	start := time.Now()
	nextNotice := start // first notice when SQLite first hands the wait back
	for {
		tx, err := beginTx(ctx, nil)
		if err == nil || !isBusy(err) {
			return tx, s.translate(err)
		}
		waited := time.Since(start)
		if waited >= s.WriteWait {
			return nil, fmt.Errorf("%s: %s has been writing to the project for longer than this program waits (%v); try again when it has finished: %w",
				s.path, describe(writerOf(s.path)), s.WriteWait.Round(time.Second), project.ErrBusy)
		}
		if s.Notice != nil && time.Now().After(nextNotice) {
			s.Notice(fmt.Sprintf("waiting for %s: %s is writing to it (%v so far, giving up after %v)",
				s.path, describe(writerOf(s.path)), waited.Round(time.Second), s.WriteWait.Round(time.Second)))
			nextNotice = time.Now().Add(noticeEvery)
		}
		if err := ctx.Err(); err != nil {
			return nil, err
		}
	}
}

func isBusy(err error) bool {
	var se sqlite3.Error
	return errors.As(err, &se) && (se.Code == sqlite3.ErrBusy || se.Code == sqlite3.ErrLocked)
}

// exec runs one writing statement in its own transaction, so that it
// waits for other writers as transactions do.
func (s *Store) exec(ctx context.Context, query string, args ...any) (sql.Result, error) {
	var res sql.Result
	err := s.tx(ctx, func(tx *sql.Tx) error {
		var err error
		res, err = tx.ExecContext(ctx, query, args...)
		return err
	})
	return res, err
}
