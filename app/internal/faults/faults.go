// Package faults makes a SQLite project fail the way a full disk would, for
// the tests of what the program does when saving fails. Only tests import it.
package faults

import (
	"database/sql"
	"fmt"
	"strings"
	"testing"

	_ "github.com/mattn/go-sqlite3"
)

// RefuseLabelWrites adds, through a connection of its own, triggers that
// abort the given kinds of write (INSERT, UPDATE, DELETE) on labels of the
// SQLite project at path. The returned function (also run at clean-up)
// lifts them.
func RefuseLabelWrites(t *testing.T, path string, kinds ...string) func() {
	t.Helper()
	db, err := sql.Open("sqlite3", path+"?_busy_timeout=5000")
	if err != nil {
		t.Fatal(err)
	}
	for _, k := range kinds {
		q := fmt.Sprintf("CREATE TRIGGER refuse_%s BEFORE %s ON labels BEGIN SELECT RAISE(ABORT, 'disk full (test)'); END", strings.ToLower(k), k)
		if _, err := db.Exec(q); err != nil {
			t.Fatal(err)
		}
	}
	lifted := false
	lift := func() {
		if lifted {
			return
		}
		lifted = true
		for _, k := range kinds {
			if _, err := db.Exec("DROP TRIGGER refuse_" + strings.ToLower(k)); err != nil {
				t.Error(err)
			}
		}
		db.Close()
	}
	t.Cleanup(lift)
	return lift
}
