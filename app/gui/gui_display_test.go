package gui

import (
	"errors"
	"net"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// Without a reachable X display on Linux the window cannot open, and the
// program says so in one line (the toolkit itself panics with a stack
// trace); elsewhere nothing stops it.
func TestNoDisplay(t *testing.T) {
	env := func(vars map[string]string) func(string) string {
		return func(k string) string { return vars[k] }
	}
	refuse := func(string, string, time.Duration) (net.Conn, error) { return nil, errors.New("connection refused") }
	if why := noDisplay("linux", env(nil), refuse); !strings.Contains(why, "DISPLAY") || !strings.Contains(why, "--no-open") {
		t.Errorf("linux without a display: %q", why)
	}
	// DISPLAY set but nothing listening: this used to end in a panic.
	if why := noDisplay("linux", env(map[string]string{"DISPLAY": ":77"}), refuse); !strings.Contains(why, "cannot reach") || !strings.Contains(why, "/tmp/.X11-unix/X77") {
		t.Errorf("linux with an unreachable display: %q", why)
	}
	if why := noDisplay("linux", env(map[string]string{"DISPLAY": "nonsense"}), refuse); !strings.Contains(why, "not a display name") {
		t.Errorf("linux with a malformed DISPLAY: %q", why)
	}
	if why := noDisplay("windows", env(nil), refuse); why != "" {
		t.Errorf("windows: %q", why)
	}
	// A listening socket is a display.
	sock := filepath.Join(t.TempDir(), "xquartz")
	l, err := net.Listen("unix", sock+":5")
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	if why := noDisplay("linux", env(map[string]string{"DISPLAY": sock + ":5"}), net.DialTimeout); why != "" {
		t.Errorf("linux with a listening display socket: %q", why)
	}
}

// X display names map to the X server's sockets (X11 convention).
func TestXDisplayAddr(t *testing.T) {
	for _, c := range []struct{ in, network, addr string }{
		{":0", "unix", "/tmp/.X11-unix/X0"},
		{":1.0", "unix", "/tmp/.X11-unix/X1"},
		{"unix:2", "unix", "/tmp/.X11-unix/X2"},
		{"host.example:3", "tcp", "host.example:6003"},
		{"localhost:10.0", "tcp", "localhost:6010"},
	} {
		n, a, ok := xDisplayAddr(c.in)
		if !ok || n != c.network || a != c.addr {
			t.Errorf("%q: %s %s %v, want %s %s", c.in, n, a, ok, c.network, c.addr)
		}
	}
	for _, bad := range []string{"", "0", ":x", ":-1"} {
		if _, _, ok := xDisplayAddr(bad); ok {
			t.Errorf("%q accepted", bad)
		}
	}
}
