package gui

import (
	"strings"
	"testing"
)

// Without DISPLAY or WAYLAND_DISPLAY on Linux the window cannot open, and
// the program says so (the toolkit itself panics); elsewhere, or with
// either variable set, nothing stops it.
func TestNoDisplay(t *testing.T) {
	env := func(vars map[string]string) func(string) string {
		return func(k string) string { return vars[k] }
	}
	if why := noDisplay("linux", env(nil)); !strings.Contains(why, "DISPLAY") || !strings.Contains(why, "--no-open") {
		t.Errorf("linux without a display: %q", why)
	}
	for _, vars := range []map[string]string{{"DISPLAY": ":0"}, {"WAYLAND_DISPLAY": "wayland-0"}} {
		if why := noDisplay("linux", env(vars)); why != "" {
			t.Errorf("linux with %v: %q", vars, why)
		}
	}
	if why := noDisplay("windows", env(nil)); why != "" {
		t.Errorf("windows: %q", why)
	}
}
