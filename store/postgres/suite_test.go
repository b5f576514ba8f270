package postgres

import (
	"fmt"
	"sync/atomic"
	"testing"

	"boxwright/store/postgres/pgtest"
	"boxwright/store/storetest"
)

// The store suite that the SQLite file passes, against a server project:
// one private server, a new database per case, opened by its owner.
func TestSuite(t *testing.T) {
	srv := pgtest.Start(t)
	srv.Exec(t, "postgres", `CREATE ROLE olga LOGIN CREATEROLE PASSWORD 'olga-pw'`)
	var n atomic.Int64
	storetest.RunWith(t, storetest.ServerBackend, func(t *testing.T) storetest.Backend {
		db := fmt.Sprintf("p%d", n.Add(1))
		srv.Exec(t, "postgres", fmt.Sprintf(`CREATE DATABASE %s OWNER olga`, db))
		s, err := Create(bg, srv.DSN("olga", "olga-pw", db))
		if err != nil {
			t.Fatal(err)
		}
		s.SetImageCache(t.TempDir(), 0)
		return s
	})
}
