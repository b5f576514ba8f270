package pgtest

import (
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// The server starts, answers on its socket, survives a restart and has
// only the socket: listen_addresses is empty.
func TestServerStartsAndRestarts(t *testing.T) {
	s := Start(t)
	ask := func(sql string) string {
		t.Helper()
		out, err := exec.Command(filepath.Join(s.bin, "psql"), "-X", "-At", "-h", s.Socket, "-p", strconv.Itoa(s.Port), "-U", Admin, "-d", "postgres", "-c", sql).CombinedOutput()
		if err != nil {
			t.Fatalf("psql %s: %v %s", sql, err, out)
		}
		return strings.TrimSpace(string(out))
	}
	if got := ask("SHOW listen_addresses"); got != "" {
		t.Errorf("listen_addresses = %q, want none (socket only)", got)
	}
	s.CreateDatabase(t, "p1")
	s.Restart(t)
	if got := ask("SELECT count(*) FROM pg_database WHERE datname = 'p1'"); got != "1" {
		t.Errorf("database lost over a restart: %q", got)
	}
}
