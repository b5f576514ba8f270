package ops

import (
	"context"
	"fmt"
	"path/filepath"
	"testing"

	"boxwright/app/backend"
	"boxwright/assets/demo"
	"boxwright/store/postgres/pgtest"
)

// BenchmarkCopyDemo copies the default demo (40 images) each way:
// file → server, server → file (the bytes fetched from the server, with
// an empty image cache each time), and file → file.
func BenchmarkCopyDemo(b *testing.B) {
	ctx := context.Background()
	dir := b.TempDir()
	if err := MakeDemo(ctx, dir, demo.Config{Seed: 1}, nil); err != nil {
		b.Fatal(err)
	}
	orig := filepath.Join(dir, DemoProjectName)
	srv := pgtest.Start(b)
	srv.Exec(b, "postgres", `CREATE ROLE olga LOGIN CREATEROLE PASSWORD 'olga-pw'`)
	n := 0
	database := func() string {
		n++
		name := fmt.Sprintf("bench%d", n)
		srv.Exec(b, "postgres", "CREATE DATABASE "+name+" OWNER olga")
		return srv.URL("olga", "olga-pw", name)
	}
	copyOnce := func(from, to string) {
		src, err := backend.OpenForReading(from)
		if err != nil {
			b.Fatal(err)
		}
		defer src.Close()
		if _, err := CopyTo(ctx, src, to, CopyOptions{}); err != nil {
			b.Fatal(err)
		}
	}
	served := database()
	b.Setenv("XDG_CACHE_HOME", b.TempDir())
	copyOnce(orig, served)
	b.Run("file-to-server", func(b *testing.B) {
		for range b.N {
			b.StopTimer()
			url := database()
			b.StartTimer()
			copyOnce(orig, url)
		}
	})
	b.Run("server-to-file", func(b *testing.B) {
		for range b.N {
			b.StopTimer()
			b.Setenv("XDG_CACHE_HOME", b.TempDir())
			to := filepath.Join(b.TempDir(), "snapshot.boxw")
			b.StartTimer()
			copyOnce(served, to)
		}
	})
	b.Run("file-to-file", func(b *testing.B) {
		for range b.N {
			copyOnce(orig, filepath.Join(b.TempDir(), "copy.boxw"))
		}
	})
}
