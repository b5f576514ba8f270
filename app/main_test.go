package main

import (
	"os"
	"os/exec"
	"strings"
	"testing"
)

// The GUI toolkit reads the locale while its packages initialise and logs
// an alarming error for the bare C locale common on servers. Package locale
// must replace it first; this runs the test binary itself under LANG=C.UTF-8
// (running no test) and checks that nothing was logged, so that a change of
// imports or package paths that breaks the order fails here, not in front
// of a user.
func TestNoLocaleErrorAtStart(t *testing.T) {
	cmd := exec.Command(os.Args[0], "-test.run=^$")
	var env []string
	for _, kv := range os.Environ() {
		if !strings.HasPrefix(kv, "LC_ALL=") && !strings.HasPrefix(kv, "LC_MESSAGES=") && !strings.HasPrefix(kv, "LANG=") {
			env = append(env, kv)
		}
	}
	cmd.Env = append(env, "LANG=C.UTF-8")
	out, err := cmd.CombinedOutput()
	if err != nil {
		t.Fatalf("the test binary under LANG=C.UTF-8: %v\n%s", err, out)
	}
	if strings.Contains(string(out), "locale") {
		t.Errorf("a locale error was logged at start:\n%s", out)
	}
}
