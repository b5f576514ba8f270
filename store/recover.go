package store

import (
	"context"
	"database/sql"
	"fmt"
	"os"
	"path/filepath"
	"strings"
)

// TableRecovery is what Recover saved of one table.
type TableRecovery struct {
	Table  string
	Copied int
	// Unreadable lists the id ranges that could not be read, such as
	// "1201-1260".
	Unreadable []string
	// Dropped counts rows left out because they referred to rows that
	// were lost (a label of a lost image) or repeated a unique value.
	Dropped int
}

// maxRowID bounds the search for the next readable row.
const maxRowID = int64(1) << 40

// Recover copies every row that can still be read from the damaged
// project at src into a new project at dst (which must not exist); src is
// only read. Rows on damaged pages are stepped over (see scan), so that
// one bad page loses only its own rows.
// Rows that refer to lost rows are dropped, so that the new project is
// consistent; the report says what was lost where.
func Recover(ctx context.Context, src, dst string) ([]TableRecovery, error) {
	abs, err := filepath.Abs(src)
	if err != nil {
		return nil, err
	}
	if err := existingFile(src); err != nil {
		return nil, err
	}
	from, err := openRO(abs, nil)
	if err != nil {
		return nil, fmt.Errorf("recover %s: %w", src, notProject(err))
	}
	defer from.Close()
	to, err := Create(dst)
	if err != nil {
		return nil, err
	}
	ok := false
	defer func() {
		to.Close()
		if !ok {
			os.Remove(to.path)
			os.Remove(to.path + "-wal")
			os.Remove(to.path + "-shm")
		}
	}()
	tables, err := userTables(ctx, to.db)
	if err != nil {
		return nil, err
	}
	conn, err := to.db.Conn(ctx)
	if err != nil {
		return nil, err
	}
	defer conn.Close()
	// References are checked once at the end, when every table is in.
	if _, err := conn.ExecContext(ctx, "PRAGMA foreign_keys = OFF"); err != nil {
		return nil, err
	}
	defer conn.ExecContext(context.Background(), "PRAGMA foreign_keys = ON")
	if _, err := conn.ExecContext(ctx, "BEGIN IMMEDIATE"); err != nil {
		return nil, err
	}
	defer conn.ExecContext(context.Background(), "ROLLBACK")
	var report []TableRecovery
	for _, t := range tables {
		cols, err := commonColumns(ctx, from, to.db, t)
		if err != nil {
			return nil, err
		}
		r := TableRecovery{Table: t}
		if len(cols) > 0 {
			c := copier{ctx: ctx, from: from, to: conn, table: t, cols: cols, report: &r}
			if err := c.scan(); err != nil {
				return nil, err
			}
		}
		report = append(report, r)
	}
	if err := dropOrphans(ctx, conn, report); err != nil {
		return nil, err
	}
	if _, err := conn.ExecContext(ctx, "COMMIT"); err != nil {
		return nil, fmt.Errorf("recover into %s: %w", dst, err)
	}
	ok = true
	return report, nil
}

// userTables lists the tables of the new project that hold data (the
// schema record is the new project's own).
func userTables(ctx context.Context, db *sql.DB) ([]string, error) {
	rows, err := db.QueryContext(ctx, `SELECT name FROM sqlite_master WHERE type = 'table'
		AND name NOT LIKE 'sqlite_%' AND name <> 'schema_migrations' ORDER BY rootpage`)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var ts []string
	for rows.Next() {
		var t string
		if err := rows.Scan(&t); err != nil {
			return nil, err
		}
		ts = append(ts, t)
	}
	return ts, rows.Err()
}

func columns(ctx context.Context, db *sql.DB, table string) (map[string]bool, []string, error) {
	rows, err := db.QueryContext(ctx, "SELECT name FROM pragma_table_info(?)", table)
	if err != nil {
		return nil, nil, err
	}
	defer rows.Close()
	set := map[string]bool{}
	var order []string
	for rows.Next() {
		var c string
		if err := rows.Scan(&c); err != nil {
			return nil, nil, err
		}
		set[c] = true
		order = append(order, c)
	}
	return set, order, rows.Err()
}

// commonColumns are the columns of table in the new schema that the old
// file has too (none when the old file lost the table).
func commonColumns(ctx context.Context, from, to *sql.DB, table string) ([]string, error) {
	have, _, err := columns(ctx, from, table)
	if err != nil {
		return nil, nil // the table's schema is unreadable: nothing to copy
	}
	_, want, err := columns(ctx, to, table)
	if err != nil {
		return nil, err
	}
	var cols []string
	for _, c := range want {
		if have[c] {
			cols = append(cols, c)
		}
	}
	return cols, nil
}

type copier struct {
	ctx    context.Context
	from   *sql.DB
	to     *sql.Conn
	table  string
	cols   []string
	report *TableRecovery
}

// scan copies the table in rowid order. Where a read fails, the rows
// read before the failure are kept, and the next readable row is found by
// doubling a step over the ids and then halving back to the first id that
// reads, so that a damaged page costs a few dozen queries and only its own
// rows.
func (c *copier) scan() error {
	var from int64 // copy rows with rowid > from
	for {
		if err := c.ctx.Err(); err != nil {
			return err
		}
		rows, last, err := c.read(from, 500)
		if werr := c.write(rows); werr != nil {
			return werr
		}
		if err == nil && len(rows) < 500 {
			return nil
		}
		if len(rows) > 0 {
			from = last
		}
		if err == nil {
			continue
		}
		// The row after from cannot be read: find the next one that can.
		step := int64(1)
		for !c.readable(from+step) && from+step < maxRowID {
			step *= 2
		}
		if from+step >= maxRowID {
			c.unreadable(fmt.Sprintf("%d and after", from+1))
			return nil
		}
		lo, hi := step/2, step // readable at hi, not at lo (or lo is 0)
		for hi-lo > 1 {
			mid := lo + (hi-lo)/2
			if c.readable(from + mid) {
				hi = mid
			} else {
				lo = mid
			}
		}
		c.unreadable(fmt.Sprintf("%d-%d", from+1, from+hi))
		from += hi
	}
}

func (c *copier) unreadable(ids string) { c.report.Unreadable = append(c.report.Unreadable, ids) }

// readable says whether the first row after id can be read.
func (c *copier) readable(id int64) bool {
	_, _, err := c.read(id, 1)
	return err == nil
}

// read returns up to limit rows with rowid > from, in order, and the last
// rowid read; on an error it returns the rows read before it.
func (c *copier) read(from int64, limit int) ([][]any, int64, error) {
	q := fmt.Sprintf("SELECT rowid, %s FROM %s WHERE rowid > ? ORDER BY rowid LIMIT ?", strings.Join(c.cols, ", "), c.table)
	rows, err := c.from.QueryContext(c.ctx, q, from, limit)
	if err != nil {
		return nil, from, err
	}
	defer rows.Close()
	var out [][]any
	last := from
	for rows.Next() {
		vals := make([]any, len(c.cols))
		ptrs := []any{&last}
		for i := range vals {
			ptrs = append(ptrs, &vals[i])
		}
		if err := rows.Scan(ptrs...); err != nil {
			return out, last, err
		}
		out = append(out, vals)
	}
	return out, last, rows.Err()
}

func (c *copier) write(rows [][]any) error {
	if len(rows) == 0 {
		return nil
	}
	q := fmt.Sprintf("INSERT OR IGNORE INTO %s (%s) VALUES (%s)", c.table, strings.Join(c.cols, ", "),
		strings.TrimSuffix(strings.Repeat("?, ", len(c.cols)), ", "))
	st, err := c.to.PrepareContext(c.ctx, q)
	if err != nil {
		return err
	}
	defer st.Close()
	for _, r := range rows {
		res, err := st.ExecContext(c.ctx, r...)
		if err != nil {
			return fmt.Errorf("recover %s: %w", c.table, err)
		}
		if n, _ := res.RowsAffected(); n == 1 {
			c.report.Copied++
		} else {
			c.report.Dropped++
		}
	}
	return nil
}

// dropOrphans deletes rows whose references point at lost rows, again
// until none are left (a dropped image drops its labels, which may drop
// their review records).
func dropOrphans(ctx context.Context, conn *sql.Conn, report []TableRecovery) error {
	for {
		rows, err := conn.QueryContext(ctx, "PRAGMA foreign_key_check")
		if err != nil {
			return err
		}
		type orphan struct {
			table string
			rowid int64
		}
		var os []orphan
		for rows.Next() {
			var o orphan
			var parent string
			var fk int
			if err := rows.Scan(&o.table, &o.rowid, &parent, &fk); err != nil {
				rows.Close()
				return err
			}
			os = append(os, o)
		}
		rows.Close()
		if len(os) == 0 {
			return nil
		}
		for _, o := range os {
			res, err := conn.ExecContext(ctx, "DELETE FROM "+o.table+" WHERE rowid = ?", o.rowid)
			if err != nil {
				return err
			}
			if n, _ := res.RowsAffected(); n == 1 {
				for i := range report {
					if report[i].Table == o.table {
						report[i].Copied--
						report[i].Dropped++
					}
				}
			}
		}
	}
}
